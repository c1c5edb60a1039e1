package store

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"slices"

	"ebb/internal/civil"
	"ebb/internal/problem"
)

// VersionStats are facts about a dataset as of one version, computed once
// after an import (ComputeVersionStats) and stored with it
// (SaveVersionStats), so that pages and charts never scan the orders.
type VersionStats struct {
	Orders             int
	OrderDays          int // distinct (customer, day) pairs: orders of one customer on one day count once
	Customers          int // customers with at least one order
	SingleDayCustomers int // customers with exactly one order day
	KnownCustomers     int // customers stored, including those of a customers file without orders
	Contactable        int // known customers with contactable = 1
	WithAmount         int // orders with an amount
	// FirstDay and LastDay are the first and last order days; both are the
	// zero Date when there are no orders.
	FirstDay, LastDay civil.Date
	// Months holds every calendar month from FirstDay's to LastDay's, in
	// order, months without orders included with zeros; empty when there
	// are no orders.
	Months []MonthCount
}

// MonthCount are the figures of one calendar month.
type MonthCount struct {
	Month        string // "2024-03"
	Orders       int
	OrderDays    int // distinct (customer, day) pairs with the day in this month
	NewCustomers int // customers whose first order day is in this month
}

// SingleDayShare is the share of customers with orders who ordered on one
// day only (0 to 1); 0 when there are no such customers at all.
func (st VersionStats) SingleDayShare() float64 {
	if st.Customers == 0 {
		return 0
	}
	return float64(st.SingleDayCustomers) / float64(st.Customers)
}

// ComputeVersionStats computes the statistics of the dataset of version
// versionID as of that version: the orders and customers of the dataset's
// versions with a seq up to its own that are ready, plus the version
// itself, which may still be loading (callers compute the figures right
// before or right after making it ready). Other loading versions are left
// out. Contactable counts the flags as stored now: details a later import
// changed are not rolled back. A version that does not exist is a
// problem.NotFound.
//
// All reads run in one read transaction, so they see one snapshot. The
// orders are read by one rowid range scan per version straight from the
// driver (database/sql's Scan costs about 1 µs a row, PLATFORM.md §1) and
// aggregated in Go: a counting sort by customer id (ids are dense) groups
// each customer's order days, which gives distinct order days, first order
// days and single-day customers without a map.
func (s *Store) ComputeVersionStats(ctx context.Context, versionID int64) (VersionStats, error) {
	return s.ComputeVersionStatsWith(ctx, versionID, nil)
}

// VersionOrders are a version's own orders as its import wrote them:
// parallel customer ids and order days, and how many had an amount.
type VersionOrders struct {
	Customers  []int32
	Days       []int32
	WithAmount int
}

// ComputeVersionStatsWith is ComputeVersionStats with the version's own
// orders given from memory (own, when not nil) instead of read back: the
// import that just wrote them saves a second pass over every row.
func (s *Store) ComputeVersionStatsWith(ctx context.Context, versionID int64, own *VersionOrders) (VersionStats, error) {
	var st VersionStats
	err := s.readRaw(ctx, func(q driver.ConnPrepareContext) error {
		var err error
		st, err = computeVersionStats(ctx, q, versionID, own)
		return err
	})
	if err != nil {
		if problem.As(err) != nil {
			return VersionStats{}, err
		}
		return VersionStats{}, fmt.Errorf("compute stats of version %d: %w", versionID, err)
	}
	return st, nil
}

func computeVersionStats(ctx context.Context, q driver.ConnPrepareContext, versionID int64, own *VersionOrders) (st VersionStats, err error) {
	var datasetID, seq int64
	found := false
	err = rawQuery(ctx, q, `SELECT dataset_id, seq FROM versions WHERE id = ?`, []any{versionID}, func(row []driver.Value) error {
		found = true
		var ok1, ok2 bool
		datasetID, ok1 = row[0].(int64)
		seq, ok2 = row[1].(int64)
		if !ok1 || !ok2 {
			return fmt.Errorf("version row is (%T, %T), want integers", row[0], row[1])
		}
		return nil
	})
	if err != nil {
		return st, fmt.Errorf("read version: %w", err)
	}
	if !found {
		return st, problem.New(problem.NotFound, "there is no version %d", versionID)
	}

	var versions []int64
	err = rawQuery(ctx, q, `SELECT id FROM versions WHERE dataset_id = ? AND seq <= ? AND (state = 'ready' OR id = ?) ORDER BY seq`,
		[]any{datasetID, seq, versionID}, func(row []driver.Value) error {
			id, ok := row[0].(int64)
			if !ok {
				return fmt.Errorf("version id is %T, want an integer", row[0])
			}
			versions = append(versions, id)
			return nil
		})
	if err != nil {
		return st, fmt.Errorf("list versions of dataset %d: %w", datasetID, err)
	}

	// Known customers are those added by the versions included. Customer
	// ids are dense over the whole dataset, so the arrays indexed by them
	// are sized by its largest id.
	err = rawQuery(ctx, q, `SELECT count(*), COALESCE(sum(contactable = 1), 0) FROM customers
		WHERE dataset_id = ?1 AND version_id IN (
			SELECT id FROM versions WHERE dataset_id = ?1 AND seq <= ?2 AND (state = 'ready' OR id = ?3))`,
		[]any{datasetID, seq, versionID}, func(row []driver.Value) error {
			n, ok1 := row[0].(int64)
			c, ok2 := row[1].(int64)
			if !ok1 || !ok2 {
				return fmt.Errorf("customer counts are (%T, %T), want integers", row[0], row[1])
			}
			st.KnownCustomers, st.Contactable = int(n), int(c)
			return nil
		})
	if err != nil {
		return st, fmt.Errorf("count customers of dataset %d: %w", datasetID, err)
	}
	maxID := int64(-1)
	err = rawQuery(ctx, q, `SELECT COALESCE(max(id), -1) FROM customers WHERE dataset_id = ?`, []any{datasetID}, func(row []driver.Value) error {
		var ok bool
		if maxID, ok = row[0].(int64); !ok {
			return fmt.Errorf("largest customer id is %T, want an integer", row[0])
		}
		return nil
	})
	if err != nil {
		return st, fmt.Errorf("largest customer id of dataset %d: %w", datasetID, err)
	}

	// One rowid range scan per version (see 0001_datasets.sql). Measured
	// with BenchmarkComputeVersionStats and kept out because none was
	// faster: packing the three columns into one integer (half the driver
	// calls and allocations), sizing the slices up front, and scanning two
	// halves of the range on two connections at once. Most of the time is
	// SQLite stepping through the rows.
	var custs, days []int32
	for _, v := range versions {
		if own != nil && v == versionID {
			for _, c := range own.Customers {
				if c < 0 || int64(c) > maxID {
					return st, fmt.Errorf("an order's customer id %d is not a stored customer (ids 0 to %d)", c, maxID)
				}
			}
			custs = append(custs, own.Customers...)
			days = append(days, own.Days...)
			st.WithAmount += own.WithAmount
			continue
		}
		err = rawQuery(ctx, q, `SELECT customer_id, day, amount IS NOT NULL FROM orders WHERE id BETWEEN ?1 << 32 AND (?1 << 32) + 4294967295`,
			[]any{v}, func(row []driver.Value) error {
				c, ok1 := row[0].(int64)
				d, ok2 := row[1].(int64)
				has, ok3 := row[2].(int64)
				if !ok1 || !ok2 || !ok3 {
					return fmt.Errorf("an order row is (%T, %T, %T), want integers", row[0], row[1], row[2])
				}
				if c < 0 || c > maxID {
					return fmt.Errorf("an order's customer id %d is not a stored customer (ids 0 to %d)", c, maxID)
				}
				if d != int64(int32(d)) {
					return fmt.Errorf("an order's day %d is out of range", d)
				}
				custs = append(custs, int32(c))
				days = append(days, int32(d))
				st.WithAmount += int(has)
				return nil
			})
		if err != nil {
			return st, fmt.Errorf("read orders of version %d: %w", v, err)
		}
	}
	aggregateOrders(&st, custs, days, int(maxID+1))
	return st, nil
}

// aggregateOrders fills the order figures of st from parallel slices of
// customer ids (0 ≤ id < customers) and order days.
func aggregateOrders(st *VersionStats, custs, days []int32, customers int) {
	st.Orders = len(days)
	if len(days) == 0 {
		return
	}
	first, last := days[0], days[0]
	for _, d := range days {
		first, last = min(first, d), max(last, d)
	}
	st.FirstDay, st.LastDay = civil.Date(first), civil.Date(last)

	// month[d-first] is the index in st.Months of day d's month.
	fy, fm, _ := st.FirstDay.YMD()
	ly, lm, _ := st.LastDay.YMD()
	st.Months = make([]MonthCount, (ly-fy)*12+lm-fm+1)
	month := make([]int32, last-first+1)
	for i := range st.Months {
		y, m := fy+(fm-1+i)/12, (fm-1+i)%12+1
		st.Months[i].Month = fmt.Sprintf("%04d-%02d", y, m)
		from := max(int32(civil.FromYMD(y, m, 1)), first)
		to := min(int32(civil.FromYMD(y, m, civil.DaysIn(y, m))), last)
		for d := from; d <= to; d++ {
			month[d-first] = int32(i)
		}
	}
	for _, d := range days {
		st.Months[month[d-first]].Orders++
	}

	// Counting sort of the days by customer: start[c] is where customer c's
	// days begin in byCust.
	start := make([]int32, customers+1)
	for _, c := range custs {
		start[c+1]++
	}
	for c := 1; c <= customers; c++ {
		start[c] += start[c-1]
	}
	next := slices.Clone(start[:customers])
	byCust := make([]int32, len(days))
	for i, c := range custs {
		byCust[next[c]] = days[i]
		next[c]++
	}
	for c := range customers {
		ds := byCust[start[c]:start[c+1]]
		if len(ds) == 0 {
			continue
		}
		sortDays(ds)
		st.Customers++
		st.Months[month[ds[0]-first]].NewCustomers++
		distinct := 0
		for i, d := range ds {
			if i > 0 && d == ds[i-1] {
				continue
			}
			distinct++
			st.Months[month[d-first]].OrderDays++
		}
		st.OrderDays += distinct
		if distinct == 1 {
			st.SingleDayCustomers++
		}
	}
}

// sortDays sorts one customer's order days; most customers have a handful,
// for which an insertion sort beats the general sort.
func sortDays(ds []int32) {
	if len(ds) > 12 {
		slices.Sort(ds)
		return
	}
	for i := 1; i < len(ds); i++ {
		for j := i; j > 0 && ds[j] < ds[j-1]; j-- {
			ds[j], ds[j-1] = ds[j-1], ds[j]
		}
	}
}

// readRaw runs fn in one read-only transaction on a reader connection,
// with the driver connection for rawQuery: one snapshot for every query,
// and no database/sql Scan per value (PLATFORM.md §1: about 1 µs a row).
func (s *Store) readRaw(ctx context.Context, fn func(q driver.ConnPrepareContext) error) error {
	conn, err := s.r.Conn(ctx)
	if err != nil {
		return err
	}
	defer conn.Close()
	return conn.Raw(func(dc any) error {
		beginner, ok1 := dc.(driver.ConnBeginTx)
		q, ok2 := dc.(driver.ConnPrepareContext)
		if !ok1 || !ok2 {
			return fmt.Errorf("sqlite driver connection %T lacks BeginTx or PrepareContext", dc)
		}
		tx, err := beginner.BeginTx(ctx, driver.TxOptions{ReadOnly: true})
		if err != nil {
			return err
		}
		defer tx.Rollback() // read only: nothing to commit
		return fn(q)
	})
}

// rawQuery runs query with args on a driver connection and calls fn with
// each row; the row slice is reused, so fn must copy what it keeps.
func rawQuery(ctx context.Context, q driver.ConnPrepareContext, query string, args []any, fn func(row []driver.Value) error) error {
	stmt, err := q.PrepareContext(ctx, query)
	if err != nil {
		return err
	}
	defer stmt.Close()
	sq, ok := stmt.(driver.StmtQueryContext)
	if !ok {
		return fmt.Errorf("sqlite driver statement %T lacks QueryContext", stmt)
	}
	named := make([]driver.NamedValue, len(args))
	for i, a := range args {
		// The driver takes only driver.Value types: int becomes int64 as
		// database/sql would convert it.
		v, err := driver.DefaultParameterConverter.ConvertValue(a)
		if err != nil {
			return fmt.Errorf("argument %d: %w", i+1, err)
		}
		named[i] = driver.NamedValue{Ordinal: i + 1, Value: v}
	}
	rows, err := sq.QueryContext(ctx, named)
	if err != nil {
		return err
	}
	defer rows.Close()
	row := make([]driver.Value, len(rows.Columns()))
	for {
		if err := rows.Next(row); err != nil {
			if errors.Is(err, io.EOF) {
				return nil
			}
			return err
		}
		if err := fn(row); err != nil {
			return err
		}
	}
}

// storedStats is VersionStats as stored in version_stats.stats: dates as
// YYYY-MM-DD text like every date outside the orders table, and names that
// do not change when the Go fields are renamed.
type storedStats struct {
	Orders             int           `json:"orders"`
	OrderDays          int           `json:"order_days"`
	Customers          int           `json:"customers"`
	SingleDayCustomers int           `json:"single_day_customers"`
	KnownCustomers     int           `json:"known_customers"`
	Contactable        int           `json:"contactable"`
	WithAmount         int           `json:"with_amount"`
	FirstDay           string        `json:"first_day,omitempty"` // absent when there are no orders
	LastDay            string        `json:"last_day,omitempty"`
	Months             []storedMonth `json:"months"`
}

type storedMonth struct {
	Month        string `json:"month"`
	Orders       int    `json:"orders"`
	OrderDays    int    `json:"order_days"`
	NewCustomers int    `json:"new_customers"`
}

// SaveVersionStats stores the statistics of version versionID, replacing
// any stored before, stamped with the store's clock. A version that does
// not exist is a problem.NotFound.
func (s *Store) SaveVersionStats(ctx context.Context, versionID int64, st VersionStats) error {
	doc := storedStats{
		Orders: st.Orders, OrderDays: st.OrderDays, Customers: st.Customers,
		SingleDayCustomers: st.SingleDayCustomers, KnownCustomers: st.KnownCustomers,
		Contactable: st.Contactable, WithAmount: st.WithAmount,
		Months: make([]storedMonth, len(st.Months)),
	}
	if st.Orders > 0 {
		doc.FirstDay, doc.LastDay = st.FirstDay.String(), st.LastDay.String()
	}
	for i, m := range st.Months {
		doc.Months[i] = storedMonth(m)
	}
	body, err := json.Marshal(doc)
	if err != nil {
		return fmt.Errorf("save stats of version %d: %w", versionID, err)
	}
	res, err := s.w.ExecContext(ctx, `INSERT INTO version_stats (version_id, stats, computed_at)
		SELECT id, ?, ? FROM versions WHERE id = ?
		ON CONFLICT (version_id) DO UPDATE SET stats = excluded.stats, computed_at = excluded.computed_at`,
		string(body), s.stamp(), versionID)
	if err != nil {
		return fmt.Errorf("save stats of version %d: %w", versionID, err)
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return problem.New(problem.NotFound, "there is no version %d", versionID)
	}
	return nil
}

// VersionStats returns the statistics stored for version versionID; a
// problem.NotFound when none were saved.
func (s *Store) VersionStats(ctx context.Context, versionID int64) (VersionStats, error) {
	var body string
	err := s.r.QueryRowContext(ctx, `SELECT stats FROM version_stats WHERE version_id = ?`, versionID).Scan(&body)
	if errors.Is(err, sql.ErrNoRows) {
		return VersionStats{}, problem.New(problem.NotFound, "there are no statistics for version %d", versionID)
	}
	if err != nil {
		return VersionStats{}, fmt.Errorf("stats of version %d: %w", versionID, err)
	}
	var doc storedStats
	if err := json.Unmarshal([]byte(body), &doc); err != nil {
		return VersionStats{}, fmt.Errorf("stats of version %d: stored document: %w", versionID, err)
	}
	st := VersionStats{
		Orders: doc.Orders, OrderDays: doc.OrderDays, Customers: doc.Customers,
		SingleDayCustomers: doc.SingleDayCustomers, KnownCustomers: doc.KnownCustomers,
		Contactable: doc.Contactable, WithAmount: doc.WithAmount,
	}
	if doc.FirstDay != "" {
		if st.FirstDay, err = civil.Parse(doc.FirstDay); err != nil {
			return VersionStats{}, fmt.Errorf("stats of version %d: stored first_day: %w", versionID, err)
		}
		if st.LastDay, err = civil.Parse(doc.LastDay); err != nil {
			return VersionStats{}, fmt.Errorf("stats of version %d: stored last_day: %w", versionID, err)
		}
	}
	if len(doc.Months) > 0 {
		st.Months = make([]MonthCount, len(doc.Months))
		for i, m := range doc.Months {
			st.Months[i] = MonthCount(m)
		}
	}
	return st, nil
}
