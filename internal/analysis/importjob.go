package analysis

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"time"

	"ebb/internal/ingest"
	"ebb/internal/jobs"
	"ebb/internal/problem"
	"ebb/internal/store"
)

// KindImport is the job kind of an import from an upload.
const KindImport = "import"

// Upload file names inside an upload's folder.
const (
	UploadOrders    = "orders.csv"
	UploadCustomers = "customers.csv"
	UploadReport    = "problems.csv"
)

// ImportParams are an import job's parameters, as chosen on the mapping page.
type ImportParams struct {
	Upload   string             `json:"upload"` // upload token
	Dataset  string             `json:"dataset"`
	Append   bool               `json:"append"`
	TimeZone string             `json:"timezone"`
	Columns  ingest.Columns     `json:"columns"`
	Dates    ingest.DateOptions `json:"dates"`
	Policy   string             `json:"policy"` // "reject" or "skip"
}

// ImportOutcome is an import job's result, kept with the job for its page.
type ImportOutcome struct {
	DatasetID    int64          `json:"dataset_id,omitempty"`
	Dataset      string         `json:"dataset"`
	Version      int            `json:"version,omitempty"`
	Orders       int            `json:"orders"`
	NewCustomers int            `json:"new_customers"`
	Skipped      int            `json:"skipped"`
	Repeats      int            `json:"repeats"`
	Problems     []ProblemLine  `json:"problems,omitempty"` // the first ingest.MaxShown
	ProblemCount int            `json:"problem_count"`
	Report       bool           `json:"report"` // a full problem report can be downloaded
	Customers    *CustomerCount `json:"customers,omitempty"`
}

// CustomerCount summarises a customers file.
type CustomerCount struct {
	Read, NotContactable, Skipped int
}

// ProblemLine is one problem as a page lists it.
type ProblemLine struct {
	File    string `json:"file"`
	Line    int    `json:"line"`
	Col     int    `json:"col"`
	Column  string `json:"column"`
	Message string `json:"message"`
}

// ImportJob returns the job function that imports an upload into a dataset.
// Every problem goes to the upload's problems.csv; the first ones are kept
// in the result, which is stored with a rejected job as well.
func ImportJob(st *store.Store, now func() time.Time) jobs.Func {
	return func(ctx context.Context, j jobs.Job, p *jobs.Progress) ([]byte, error) {
		var params ImportParams
		if err := json.Unmarshal(j.Params, &params); err != nil {
			return nil, fmt.Errorf("import job %d: params: %w", j.ID, err)
		}
		up, err := st.UploadByToken(ctx, params.Upload)
		if err != nil {
			return nil, err
		}
		policy, err := ingest.ParsePolicy(params.Policy)
		if err != nil {
			return nil, problem.Wrap(problem.Invalid, err, "%v", err)
		}
		orders, err := os.Open(filepath.Join(up.Dir, UploadOrders))
		if err != nil {
			return nil, fmt.Errorf("import job %d: %w", j.ID, err)
		}
		defer orders.Close()
		req := ImportRequest{
			Dataset: params.Dataset, Append: params.Append, TimeZone: params.TimeZone,
			Orders:  Source{Name: up.OrdersName, R: orders, Size: up.OrdersSize},
			Columns: params.Columns, Dates: params.Dates, Policy: policy, Now: now(),
			Progress: func(pct float64, note string) { p.Set(pct, note) },
		}
		if up.CustomersName != "" {
			cf, err := os.Open(filepath.Join(up.Dir, UploadCustomers))
			if err != nil {
				return nil, fmt.Errorf("import job %d: %w", j.ID, err)
			}
			defer cf.Close()
			req.Customers = &Source{Name: up.CustomersName, R: cf, Size: up.CustomersSize}
		}
		report, err := CreateReport(filepath.Join(up.Dir, UploadReport))
		if err != nil {
			return nil, fmt.Errorf("import job %d: %w", j.ID, err)
		}
		req.OnProblem = report.Add
		res, ierr := Import(ctx, st, req)
		if err := report.Close(); err != nil && ierr == nil {
			ierr = fmt.Errorf("import job %d: write problem report: %w", j.ID, err)
		}
		out := outcome(params.Dataset, res, ierr)
		b, _ := json.Marshal(out)
		return b, ierr
	}
}

func outcome(dataset string, res *ImportResult, err error) ImportOutcome {
	out := ImportOutcome{Dataset: dataset}
	var rej *ingest.Rejected
	if errors.As(err, &rej) {
		out.ProblemCount = rej.Count
		out.Problems = lines(rej.Problems)
		out.Report = rej.Count > 0
		return out
	}
	if res == nil || res.Orders == nil {
		return out
	}
	if err == nil {
		out.DatasetID, out.Version = res.Import.DatasetID, res.Import.Seq
	}
	s := res.Orders
	out.Orders, out.NewCustomers, out.Skipped, out.Repeats = s.Accepted, res.CustomersAdded, s.Skipped, s.Repeats
	out.ProblemCount, out.Problems = s.ProblemCount, lines(s.Problems)
	if res.Customers != nil {
		c := res.Customers
		out.Customers = &CustomerCount{Read: c.Accepted, NotContactable: c.NonContact, Skipped: c.Skipped}
		out.ProblemCount += c.ProblemCount
		out.Problems = append(lines(c.Problems), out.Problems...)
		if len(out.Problems) > ingest.MaxShown {
			out.Problems = out.Problems[:ingest.MaxShown]
		}
	}
	out.Report = out.ProblemCount > 0
	return out
}

func lines(ps []ingest.Problem) []ProblemLine {
	out := make([]ProblemLine, len(ps))
	for i, p := range ps {
		out[i] = ProblemLine{File: p.File, Line: p.Line, Col: p.Col, Column: p.Column, Message: p.Message}
	}
	return out
}

// Report writes every problem of an import to a CSV file, as found.
type Report struct {
	f *os.File
	w *csv.Writer
}

// ReportHeader is the header of a problem report.
var ReportHeader = []string{"file", "line", "column_number", "column", "problem"}

// CreateReport creates (or truncates) the report file at path.
func CreateReport(path string) (*Report, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, err
	}
	w := csv.NewWriter(f)
	w.Write(ReportHeader)
	return &Report{f: f, w: w}, nil
}

// Add writes one problem.
func (r *Report) Add(p ingest.Problem) {
	r.w.Write([]string{p.File, strconv.Itoa(p.Line), strconv.Itoa(p.Col), p.Column, p.Message})
}

// Close flushes and closes the file.
func (r *Report) Close() error {
	r.w.Flush()
	if err := r.w.Error(); err != nil {
		r.f.Close()
		return err
	}
	return r.f.Close()
}
