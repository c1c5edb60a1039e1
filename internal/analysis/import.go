package analysis

import (
	"context"
	"errors"
	"fmt"
	"io"
	"time"

	"ebb/internal/civil"
	"ebb/internal/ingest"
	"ebb/internal/problem"
	"ebb/internal/store"
)

// Source is one input file.
type Source struct {
	Name string    // shown in messages, e.g. "orders.csv"
	R    io.Reader // the file's bytes
	Size int64     // for progress; 0 when unknown
}

// ImportRequest asks for an order file (and optionally a customers file) to
// be imported as a new version of a dataset.
type ImportRequest struct {
	Dataset   string
	Append    bool   // add to an existing dataset instead of creating one
	TimeZone  string // for a new dataset; "" = UTC
	Orders    Source
	Customers *Source
	Columns   ingest.Columns
	Dates     ingest.DateOptions
	Policy    ingest.Policy
	Now       time.Time // orders after today (in the dataset's zone) are refused
	// Progress, if set, is called now and then with 0–100 and a short note.
	Progress func(pct float64, note string)
	// OnProblem, if set, sees every problem of either file (the summaries
	// keep only the first ingest.MaxShown).
	OnProblem func(ingest.Problem)
}

// ImportResult tells what an import did.
type ImportResult struct {
	Dataset   string
	Import    store.Import
	Orders    *ingest.OrderSummary
	Customers *ingest.CustomerSummary // nil without a customers file
	// CustomersAdded counts customers new to the dataset, from either file.
	CustomersAdded int
}

// Import streams the files into a new dataset version. The version is
// written in chunked transactions while marked loading and becomes visible
// in one final small transaction, so every reader sees all of it or none of
// it. A rejected file, a cancelled context or any error leaves the database
// as it was; a crash leaves a loading version that the next Open purges.
func Import(ctx context.Context, st *store.Store, req ImportRequest) (*ImportResult, error) {
	progress := req.Progress
	if progress == nil {
		progress = func(float64, string) {}
	}
	tzName := req.TimeZone
	if tzName == "" {
		tzName = "UTC"
	}
	if _, err := time.LoadLocation(tzName); err != nil {
		return nil, problem.New(problem.Invalid, "unknown time zone %q (want an IANA name such as Europe/Berlin, or UTC)", req.TimeZone)
	}
	source := req.Orders.Name
	if req.Customers != nil {
		source += " + " + req.Customers.Name
	}
	imp, err := st.BeginImport(ctx, req.Dataset, tzName, req.Append, source)
	if err != nil {
		return nil, err
	}
	res, err := runImport(ctx, st, imp, req, progress)
	if err != nil {
		// The caller's context may be the reason; the clean-up must still run.
		cleanup, cancel := context.WithTimeout(context.WithoutCancel(ctx), time.Minute)
		defer cancel()
		if aerr := st.AbortImport(cleanup, imp); aerr != nil {
			return res, errors.Join(err, aerr)
		}
		return res, err
	}
	return res, nil
}

func runImport(ctx context.Context, st *store.Store, imp store.Import, req ImportRequest, progress func(float64, string)) (*ImportResult, error) {
	res := &ImportResult{Dataset: req.Dataset, Import: imp}
	loc, err := time.LoadLocation(imp.TimeZone)
	if err != nil {
		return res, fmt.Errorf("dataset time zone %q: %w", imp.TimeZone, err)
	}
	today := civil.Of(req.Now.In(loc))

	var keys *ingest.Keys
	refs := ingest.NewRefSet()
	var existing *ingest.OrderSet
	if imp.New {
		keys = ingest.NewKeys(nil)
	} else {
		progress(0, "reading the dataset's customers and orders")
		stored, err := st.CustomerKeys(ctx, imp.DatasetID)
		if err != nil {
			return res, err
		}
		keys = ingest.NewKeys(stored)
		existing = ingest.NewOrderSet()
		if err := st.EachOrder(ctx, imp.DatasetID, func(c int32, d civil.Date, amount float64, has bool, ref string) {
			if ref != "" {
				refs.AddStored(ref, c, d, amount, has)
			}
			existing.Add(c, d, amount, has)
		}); err != nil {
			return res, err
		}
	}

	stats := store.ImportStats{}
	keysAtStart := keys.Len()
	if req.Customers != nil {
		progress(0, "reading "+req.Customers.Name)
		firstNew := int32(keys.Len())
		cs, csum, err := ingest.ReadCustomers(ctx, req.Customers.R, ingest.CustomerOptions{
			File: req.Customers.Name, Policy: req.Policy, Keys: keys, Today: today, OnProblem: req.OnProblem})
		res.Customers = csum
		if err != nil {
			return res, err
		}
		if err := st.WriteCustomers(ctx, imp, firstNew, csum.Attributes, cs); err != nil {
			return res, err
		}
		for _, c := range cs {
			if c.ID < firstNew {
				stats.Updates = append(stats.Updates, c)
			}
		}
		stats.AttributeNames = csum.Attributes
		stats.CustomersFile = req.Customers.Name
		stats.CustomersRead = csum.Accepted
	}

	// Parsing and writing overlap: the reader hands batches to a writer
	// goroutine through a short queue, so the two cores share the work. The
	// first write error stops the reader at its next batch.
	counter := &countingReader{r: req.Orders.R}
	// The writer also keeps each order's customer and day, so the version's
	// figures need no second pass over the rows just written.
	own := &store.VersionOrders{}
	w := startWriter(ctx, func(ctx context.Context, b ingest.Batch) error {
		if err := st.WriteOrders(ctx, imp, b); err != nil {
			return err
		}
		for _, o := range b.Orders {
			own.Customers = append(own.Customers, o.Customer)
			own.Days = append(own.Days, int32(o.Day))
			if o.HasAmount {
				own.WithAmount++
			}
		}
		return nil
	})
	sum, readErr := ingest.ReadOrders(ctx, counter, ingest.OrderOptions{
		File: req.Orders.Name, Columns: req.Columns, Dates: req.Dates, Location: loc, Today: today,
		Policy: req.Policy, Keys: keys, Refs: refs, Existing: existing, OnProblem: req.OnProblem, Size: req.Orders.Size,
	}, func(b ingest.Batch) error {
		if err := w.send(b); err != nil {
			return err
		}
		if req.Orders.Size > 0 {
			progress(min(95, 95*float64(counter.n)/float64(req.Orders.Size)), "importing orders")
		}
		return nil
	})
	werr := w.close(readErr != nil)
	res.Orders = sum
	if readErr != nil {
		return res, readErr
	}
	if werr != nil {
		return res, werr
	}
	stats.RowsRead = sum.Rows
	stats.OrdersAdded = sum.Accepted
	stats.CustomersAdded = keys.Len() - keysAtStart
	res.CustomersAdded = stats.CustomersAdded
	stats.RowsSkipped = sum.Skipped
	stats.RepeatsSkipped = sum.Repeats
	stats.FirstDay, stats.LastDay = sum.FirstDay, sum.LastDay
	// The figures pages show are computed once, now, and stored with the
	// version (a failed import takes them with it).
	progress(97, "counting order days, customers and months")
	vs, err := st.ComputeVersionStatsWith(ctx, imp.VersionID, own)
	if err != nil {
		return res, err
	}
	if err := st.SaveVersionStats(ctx, imp.VersionID, vs); err != nil {
		return res, err
	}
	progress(99, "making the new version visible")
	if err := st.FinishImport(ctx, imp, stats); err != nil {
		return res, err
	}
	if sum.Accepted > 100_000 {
		// After a large import the write-ahead log is as big as the data.
		_ = st.Checkpoint(ctx)
	}
	progress(100, "done")
	return res, nil
}

// writer runs write on batches in its own goroutine.
type writer struct {
	batches chan ingest.Batch
	failed  chan error // receives the first write error, once
	done    chan struct{}
	cancel  context.CancelFunc
	err     error
}

func startWriter(ctx context.Context, write func(context.Context, ingest.Batch) error) *writer {
	ctx, cancel := context.WithCancel(ctx)
	w := &writer{batches: make(chan ingest.Batch, 2), failed: make(chan error, 1), done: make(chan struct{}), cancel: cancel}
	go func() {
		defer close(w.done)
		for b := range w.batches {
			if w.err != nil {
				continue // drain
			}
			if w.err = write(ctx, b); w.err != nil {
				w.failed <- w.err
			}
		}
	}()
	return w
}

// send queues b, or returns the write error that stopped the writer.
func (w *writer) send(b ingest.Batch) error {
	select {
	case w.batches <- b:
		return nil
	case err := <-w.failed:
		return err
	}
}

// close waits for the queued batches (cancelling them when abandon is
// set) and returns the first write error.
func (w *writer) close(abandon bool) error {
	if abandon {
		w.cancel()
	}
	close(w.batches)
	<-w.done
	w.cancel()
	return w.err
}

type countingReader struct {
	r io.Reader
	n int64
}

func (c *countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += int64(n)
	return n, err
}
