package store

import (
	"context"
	"crypto/rand"
	"database/sql"
	"database/sql/driver"
	"errors"
	"fmt"
	"strings"
	"time"

	"ebb/internal/civil"
	"ebb/internal/ingest"
	"ebb/internal/problem"
)

// Dataset is a named order history with its latest ready version.
type Dataset struct {
	ID        int64
	Name      string
	TimeZone  string
	Salt      []byte
	CreatedAt time.Time
	// DataThroughSet is the analyst's data_through, when they chose one.
	DataThroughSet *civil.Date

	Version   int64 // id of the latest ready version
	Seq       int   // its number within the dataset: 1, 2, …
	Orders    int
	Customers int
	FirstDay  civil.Date
	LastDay   civil.Date
}

// DataThrough is the last day the orders are complete for: the analyst's
// choice, or else the latest order day.
func (d Dataset) DataThrough() civil.Date {
	if d.DataThroughSet != nil {
		return *d.DataThroughSet
	}
	return d.LastDay
}

// Version is one import or append into a dataset.
type Version struct {
	ID             int64
	DatasetID      int64
	Seq            int
	Kind           string // "import" or "append"
	Source         string
	RowsRead       int
	OrdersAdded    int
	CustomersAdded int
	RowsSkipped    int
	RepeatsSkipped int
	CustomersFile  string
	CustomersRead  int
	OrdersTotal    int
	CustomersTotal int
	FirstDay       civil.Date
	LastDay        civil.Date
	CreatedAt      time.Time
	FinishedAt     time.Time
}

const datasetColumns = `d.id, d.name, d.timezone, d.data_through, d.salt, d.created_at,
	v.id, v.seq, v.orders_total, v.customers_total, v.first_day, v.last_day`

// Only datasets with a ready version are visible; a dataset whose first
// import is still loading does not exist yet for readers.
const datasetFrom = ` FROM datasets d JOIN versions v ON v.id = (
	SELECT id FROM versions WHERE dataset_id = d.id AND state = 'ready' ORDER BY seq DESC LIMIT 1)`

func scanDataset(sc interface{ Scan(...any) error }) (Dataset, error) {
	var d Dataset
	var through sql.NullString
	var created string
	var first, last sql.NullInt64
	if err := sc.Scan(&d.ID, &d.Name, &d.TimeZone, &through, &d.Salt, &created,
		&d.Version, &d.Seq, &d.Orders, &d.Customers, &first, &last); err != nil {
		return d, err
	}
	d.CreatedAt, _ = time.Parse(time.RFC3339, created)
	if through.Valid {
		t, err := civil.Parse(through.String)
		if err != nil {
			return d, fmt.Errorf("dataset %d: stored data_through: %w", d.ID, err)
		}
		d.DataThroughSet = &t
	}
	d.FirstDay, d.LastDay = civil.Date(first.Int64), civil.Date(last.Int64)
	return d, nil
}

// Datasets lists the visible datasets by name.
func (s *Store) Datasets(ctx context.Context) ([]Dataset, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT `+datasetColumns+datasetFrom+` ORDER BY d.name`)
	if err != nil {
		return nil, fmt.Errorf("list datasets: %w", err)
	}
	defer rows.Close()
	var out []Dataset
	for rows.Next() {
		d, err := scanDataset(rows)
		if err != nil {
			return nil, fmt.Errorf("list datasets: %w", err)
		}
		out = append(out, d)
	}
	return out, rows.Err()
}

// DatasetByName returns the visible dataset called name.
func (s *Store) DatasetByName(ctx context.Context, name string) (Dataset, error) {
	return s.datasetWhere(ctx, `d.name = ?`, name, fmt.Sprintf("%q", name))
}

// DatasetByID returns the visible dataset with the given id.
func (s *Store) DatasetByID(ctx context.Context, id int64) (Dataset, error) {
	return s.datasetWhere(ctx, `d.id = ?`, id, fmt.Sprint(id))
}

func (s *Store) datasetWhere(ctx context.Context, cond string, arg any, label string) (Dataset, error) {
	d, err := scanDataset(s.r.QueryRowContext(ctx, `SELECT `+datasetColumns+datasetFrom+` WHERE `+cond, arg))
	if errors.Is(err, sql.ErrNoRows) {
		return d, problem.New(problem.NotFound, "there is no dataset %s", label)
	}
	if err != nil {
		return d, fmt.Errorf("dataset %s: %w", label, err)
	}
	return d, nil
}

// SetDataThrough records the analyst's data_through for a dataset; nil goes
// back to the latest order day.
func (s *Store) SetDataThrough(ctx context.Context, datasetID int64, day *civil.Date) error {
	var v any
	if day != nil {
		v = day.String()
	}
	res, err := s.w.ExecContext(ctx, `UPDATE datasets SET data_through = ? WHERE id = ?`, v, datasetID)
	if err != nil {
		return fmt.Errorf("set data_through of dataset %d: %w", datasetID, err)
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return problem.New(problem.NotFound, "there is no dataset %d", datasetID)
	}
	return nil
}

// Versions lists the ready versions of a dataset, newest first.
func (s *Store) Versions(ctx context.Context, datasetID int64) ([]Version, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT id, dataset_id, seq, kind, source, rows_read, orders_added,
		customers_added, rows_skipped, repeats_skipped, COALESCE(customers_file, ''), customers_read,
		orders_total, customers_total, COALESCE(first_day, 0), COALESCE(last_day, 0), created_at, COALESCE(finished_at, '')
		FROM versions WHERE dataset_id = ? AND state = 'ready' ORDER BY seq DESC`, datasetID)
	if err != nil {
		return nil, fmt.Errorf("list versions of dataset %d: %w", datasetID, err)
	}
	defer rows.Close()
	var out []Version
	for rows.Next() {
		var v Version
		var created, finished string
		if err := rows.Scan(&v.ID, &v.DatasetID, &v.Seq, &v.Kind, &v.Source, &v.RowsRead, &v.OrdersAdded,
			&v.CustomersAdded, &v.RowsSkipped, &v.RepeatsSkipped, &v.CustomersFile, &v.CustomersRead,
			&v.OrdersTotal, &v.CustomersTotal, &v.FirstDay, &v.LastDay, &created, &finished); err != nil {
			return nil, fmt.Errorf("list versions of dataset %d: %w", datasetID, err)
		}
		v.CreatedAt, _ = time.Parse(time.RFC3339, created)
		v.FinishedAt, _ = time.Parse(time.RFC3339, finished)
		out = append(out, v)
	}
	return out, rows.Err()
}

// Import is a version being written.
type Import struct {
	DatasetID int64
	VersionID int64
	Seq       int
	TimeZone  string
	New       bool // the dataset was created by this import
}

// BeginImport starts a new version of the named dataset in the loading
// state. Without append the dataset must not exist yet and is created with
// the time zone tz; with append it must exist (tz is then ignored). Only one
// import per dataset may load at a time.
func (s *Store) BeginImport(ctx context.Context, name, tz string, appendTo bool, source string) (Import, error) {
	name = strings.TrimSpace(name)
	if name == "" || len(name) > 100 {
		return Import{}, problem.New(problem.Invalid, "a dataset name must have 1 to 100 characters")
	}
	var imp Import
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		var ready int
		err := tx.QueryRowContext(ctx, `SELECT d.id, d.timezone,
			(SELECT count(*) FROM versions WHERE dataset_id = d.id AND state = 'ready')
			FROM datasets d WHERE d.name = ?`, name).Scan(&imp.DatasetID, &imp.TimeZone, &ready)
		switch {
		case errors.Is(err, sql.ErrNoRows):
			if appendTo {
				return problem.New(problem.NotFound, "there is no dataset called %q to append to", name)
			}
			salt := make([]byte, 16)
			rand.Read(salt)
			res, err := tx.ExecContext(ctx, `INSERT INTO datasets (name, timezone, salt, created_at) VALUES (?, ?, ?, ?)`,
				name, tz, salt, s.stamp())
			if err != nil {
				return err
			}
			imp.DatasetID, _ = res.LastInsertId()
			imp.TimeZone = tz
			imp.New = true
		case err != nil:
			return err
		case ready == 0:
			return problem.New(problem.Conflict, "dataset %q is still being imported; wait for that import to finish", name)
		case !appendTo:
			return problem.New(problem.Conflict, "a dataset called %q exists already; append to it, or choose another name", name)
		}
		var loading int
		if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM versions WHERE dataset_id = ? AND state = 'loading'`,
			imp.DatasetID).Scan(&loading); err != nil {
			return err
		}
		if loading > 0 {
			return problem.New(problem.Conflict, "another import into %q is running; wait for it to finish", name)
		}
		if err := tx.QueryRowContext(ctx, `SELECT COALESCE(max(seq), 0) + 1 FROM versions WHERE dataset_id = ?`,
			imp.DatasetID).Scan(&imp.Seq); err != nil {
			return err
		}
		kind := "import"
		if appendTo {
			kind = "append"
		}
		res, err := tx.ExecContext(ctx, `INSERT INTO versions (dataset_id, seq, state, kind, source, created_at)
			VALUES (?, ?, 'loading', ?, ?, ?)`, imp.DatasetID, imp.Seq, kind, source, s.stamp())
		if err != nil {
			return err
		}
		imp.VersionID, _ = res.LastInsertId()
		return nil
	})
	if err != nil {
		if problem.As(err) != nil {
			return Import{}, err
		}
		return Import{}, fmt.Errorf("begin import into %q: %w", name, err)
	}
	return imp, nil
}

// CustomerKeys returns the dataset's customer keys in id order (keys[i] has
// id i).
func (s *Store) CustomerKeys(ctx context.Context, datasetID int64) ([]string, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT id, key FROM customers WHERE dataset_id = ? ORDER BY id`, datasetID)
	if err != nil {
		return nil, fmt.Errorf("customer keys of dataset %d: %w", datasetID, err)
	}
	defer rows.Close()
	var keys []string
	for rows.Next() {
		var id int
		var k string
		if err := rows.Scan(&id, &k); err != nil {
			return nil, fmt.Errorf("customer keys of dataset %d: %w", datasetID, err)
		}
		if id != len(keys) {
			return nil, fmt.Errorf("customer keys of dataset %d: ids are not dense at %d", datasetID, id)
		}
		keys = append(keys, k)
	}
	return keys, rows.Err()
}

// EachOrder calls fn for every order of the dataset's ready versions, in no
// particular order.
func (s *Store) EachOrder(ctx context.Context, datasetID int64, fn func(customer int32, day civil.Date, amount float64, hasAmount bool, ref string)) error {
	rows, err := s.r.QueryContext(ctx, `SELECT o.customer_id, o.day, o.amount, COALESCE(o.ref, '')
		FROM versions v JOIN orders o ON o.id BETWEEN v.id << 32 AND (v.id << 32) + 4294967295
		WHERE v.dataset_id = ? AND v.state = 'ready' ORDER BY v.seq, o.id`, datasetID)
	if err != nil {
		return fmt.Errorf("orders of dataset %d: %w", datasetID, err)
	}
	defer rows.Close()
	var cust, day int64
	var amount sql.NullFloat64
	var ref string
	for rows.Next() {
		if err := rows.Scan(&cust, &day, &amount, &ref); err != nil {
			return fmt.Errorf("orders of dataset %d: %w", datasetID, err)
		}
		fn(int32(cust), civil.Date(day), amount.Float64, amount.Valid, ref)
	}
	return rows.Err()
}

// WriteCustomers inserts the customers of a customers file that are new to
// the dataset (ids ≥ firstNew) as part of the import's loading version, in
// transactions of a few thousand rows so other writers are never kept
// waiting long. Rows for customers already stored are ignored here: their
// new details are applied by FinishImport, so that a rejected or crashed
// import cannot change them.
func (s *Store) WriteCustomers(ctx context.Context, imp Import, firstNew int32, attrNames []string, cs []ingest.Customer) error {
	const perTx, perInsert = 5000, 100
	for len(cs) > 0 {
		chunk := cs[:min(len(cs), perTx)]
		cs = cs[len(chunk):]
		err := s.inTx(ctx, func(tx *sql.Tx) error {
			args := make([]any, 0, 8*perInsert)
			flush := func() error {
				if len(args) == 0 {
					return nil
				}
				_, err := tx.ExecContext(ctx, multiInsert(`INSERT INTO customers (dataset_id, id, key, version_id, email, signup_date, contactable, attributes) VALUES `,
					"(?,?,?,?,?,?,?,?)", len(args)/8), args...)
				args = args[:0]
				return err
			}
			for _, c := range chunk {
				if c.ID < firstNew {
					continue
				}
				email, signup, attrs := customerDetails(attrNames, c)
				args = append(args, imp.DatasetID, int64(c.ID), c.Key, imp.VersionID, email, signup, c.Contactable, attrs)
				if len(args) == cap(args) {
					if err := flush(); err != nil {
						return err
					}
				}
			}
			return flush()
		})
		if err != nil {
			return fmt.Errorf("write customers of dataset %d: %w", imp.DatasetID, err)
		}
	}
	return nil
}

// customerDetails returns the nullable columns of a customers-file row.
func customerDetails(attrNames []string, c ingest.Customer) (email, signup, attrs any) {
	if c.Email != "" {
		email = c.Email
	}
	if c.HasSignup {
		signup = c.Signup.String()
	}
	if len(attrNames) > 0 {
		attrs = attributesJSON(attrNames, c.Attributes)
	}
	return email, signup, attrs
}

// updateCustomers replaces the details of customers already stored.
func updateCustomers(ctx context.Context, tx *sql.Tx, datasetID int64, attrNames []string, cs []ingest.Customer) error {
	if len(cs) == 0 {
		return nil
	}
	upd, err := tx.PrepareContext(ctx, `UPDATE customers SET email = ?, signup_date = ?, contactable = ?, attributes = ?
		WHERE dataset_id = ? AND id = ?`)
	if err != nil {
		return err
	}
	defer upd.Close()
	for _, c := range cs {
		email, signup, attrs := customerDetails(attrNames, c)
		if _, err := upd.ExecContext(ctx, email, signup, c.Contactable, attrs, datasetID, c.ID); err != nil {
			return fmt.Errorf("update customer %q: %w", c.Key, err)
		}
	}
	return nil
}

// attributesJSON encodes attribute names and values as a JSON object in
// column order (json.Marshal of a map would sort and cost a map per row).
func attributesJSON(names, values []string) string {
	var b strings.Builder
	b.WriteByte('{')
	for i, n := range names {
		if i > 0 {
			b.WriteByte(',')
		}
		writeJSONString(&b, n)
		b.WriteByte(':')
		writeJSONString(&b, values[i])
	}
	b.WriteByte('}')
	return b.String()
}

// writeJSONString writes s as a JSON string (RFC 8259 section 7).
func writeJSONString(b *strings.Builder, s string) {
	const hex = "0123456789abcdef"
	b.WriteByte('"')
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c == '"' || c == '\\':
			b.WriteByte('\\')
			b.WriteByte(c)
		case c < 0x20:
			b.WriteString(`\u00`)
			b.WriteByte(hex[c>>4])
			b.WriteByte(hex[c&0xF])
		default:
			b.WriteByte(c)
		}
	}
	b.WriteByte('"')
}

// rowsPerInsert is the number of orders in one multi-row INSERT; SQLite
// parses one statement for many rows (PLATFORM.md: about twice the rate of
// single-row inserts).
const rowsPerInsert = 400

// WriteOrders stores one batch — its new customers and its orders — in one
// transaction of the loading version.
//
// The rows go through the driver directly (sql.Conn.Raw) rather than
// database/sql: database/sql converts every argument of every statement
// into a fresh driver.NamedValue (over 200 MB for a million orders), which
// cost more time than SQLite's own work. Here one argument slice is reused.
func (s *Store) WriteOrders(ctx context.Context, imp Import, b ingest.Batch) error {
	conn, err := s.w.Conn(ctx)
	if err != nil {
		return fmt.Errorf("write orders of dataset %d: %w", imp.DatasetID, err)
	}
	defer conn.Close()
	err = conn.Raw(func(dc any) error {
		return writeOrdersRaw(ctx, dc, imp, b)
	})
	if err != nil {
		return fmt.Errorf("write orders of dataset %d: %w", imp.DatasetID, err)
	}
	return nil
}

func writeOrdersRaw(ctx context.Context, dc any, imp Import, b ingest.Batch) (err error) {
	beginner, ok1 := dc.(driver.ConnBeginTx)
	preparer, ok2 := dc.(driver.ConnPrepareContext)
	if !ok1 || !ok2 {
		return fmt.Errorf("sqlite driver connection %T lacks BeginTx or PrepareContext", dc)
	}
	tx, err := beginner.BeginTx(ctx, driver.TxOptions{})
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tx.Rollback()
		}
	}()
	var args []driver.NamedValue
	bind := func(vals ...driver.Value) {
		for _, v := range vals {
			args = append(args, driver.NamedValue{Ordinal: len(args) + 1, Value: v})
		}
	}
	// run executes query with args, preparing it once per distinct query.
	stmts := map[string]driver.StmtExecContext{}
	defer func() {
		for _, st := range stmts {
			st.(driver.Stmt).Close()
		}
	}()
	run := func(query string) error {
		st, ok := stmts[query]
		if !ok {
			p, err := preparer.PrepareContext(ctx, query)
			if err != nil {
				return err
			}
			st = p.(driver.StmtExecContext)
			stmts[query] = st
		}
		_, err := st.ExecContext(ctx, args)
		return err
	}

	// New customers, 100 a statement.
	const perCustomer = 100
	keys, first := b.NewKeys, int64(b.FirstNewID)
	for len(keys) > 0 {
		n := min(len(keys), perCustomer)
		args = args[:0]
		for i, k := range keys[:n] {
			bind(imp.DatasetID, first+int64(i), k, imp.VersionID)
		}
		if err := run(multiInsert(`INSERT INTO customers (dataset_id, id, key, version_id) VALUES `, "(?,?,?,?)", n)); err != nil {
			return fmt.Errorf("insert customers %d to %d: %w", first, first+int64(n)-1, err)
		}
		keys, first = keys[n:], first+int64(n)
	}

	// The next order id continues the version's range (see 0001_datasets.sql).
	next, err := nextOrderID(ctx, preparer, imp.VersionID)
	if err != nil {
		return err
	}
	orders := b.Orders
	for len(orders) > 0 {
		n := min(len(orders), rowsPerInsert)
		args = args[:0]
		for i, o := range orders[:n] {
			var amount, ref driver.Value
			if o.HasAmount {
				amount = o.Amount
			}
			if o.Ref != "" {
				ref = o.Ref
			}
			bind(next+int64(i), int64(o.Customer), int64(o.Day), amount, ref)
		}
		if err := run(orderInsert(n)); err != nil {
			return err
		}
		orders = orders[n:]
		next += int64(n)
	}
	return tx.Commit()
}

// nextOrderID returns the id the version's next order gets.
func nextOrderID(ctx context.Context, q driver.ConnPrepareContext, versionID int64) (int64, error) {
	var next int64
	found := false
	err := rawQuery(ctx, q, `SELECT COALESCE(max(id) + 1, ?1 << 32) FROM orders WHERE id BETWEEN ?1 << 32 AND (?1 << 32) + 4294967295`,
		[]any{versionID}, func(row []driver.Value) error {
			v, ok := row[0].(int64)
			if !ok {
				return fmt.Errorf("next order id of version %d: got %T", versionID, row[0])
			}
			next, found = v, true
			return nil
		})
	if err == nil && !found {
		err = fmt.Errorf("next order id of version %d: no row", versionID)
	}
	return next, err
}

// multiInsert repeats one row's placeholders n times after head. Only
// placeholders are repeated: values are always bound, never formatted in.
func multiInsert(head, row string, n int) string {
	var b strings.Builder
	b.Grow(len(head) + n*(len(row)+1))
	b.WriteString(head)
	for i := 0; i < n; i++ {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString(row)
	}
	return b.String()
}

// orderInsert is a multi-row INSERT of n orders. (Numbered placeholders
// would let rows share one value, but modernc's driver looks each one up
// by a linear search: four times slower at this size.)
func orderInsert(n int) string {
	return multiInsert(`INSERT INTO orders (id, customer_id, day, amount, ref) VALUES `, "(?,?,?,?,?)", n)
}

// ImportStats are the figures recorded when a version becomes ready.
type ImportStats struct {
	RowsRead       int
	OrdersAdded    int
	CustomersAdded int
	RowsSkipped    int
	RepeatsSkipped int
	CustomersFile  string
	CustomersRead  int
	FirstDay       civil.Date // of the orders added; ignored when none were
	LastDay        civil.Date
	// Updates are customers-file rows for customers stored before this
	// import, with the file's attribute columns; FinishImport applies them.
	Updates        []ingest.Customer
	AttributeNames []string
}

// FinishImport makes the loading version ready, in one small transaction:
// from then on every reader sees all of it, and before then none of it.
// Changed details of customers stored before are applied in the same
// transaction.
func (s *Store) FinishImport(ctx context.Context, imp Import, st ImportStats) error {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		var ordersTotal, customersTotal int
		var first, last sql.NullInt64
		err := tx.QueryRowContext(ctx, `SELECT orders_total, first_day, last_day FROM versions
			WHERE dataset_id = ? AND state = 'ready' ORDER BY seq DESC LIMIT 1`, imp.DatasetID).Scan(&ordersTotal, &first, &last)
		if err != nil && !errors.Is(err, sql.ErrNoRows) {
			return err
		}
		ordersTotal += st.OrdersAdded
		if st.OrdersAdded > 0 {
			if !first.Valid || int64(st.FirstDay) < first.Int64 {
				first = sql.NullInt64{Int64: int64(st.FirstDay), Valid: true}
			}
			if !last.Valid || int64(st.LastDay) > last.Int64 {
				last = sql.NullInt64{Int64: int64(st.LastDay), Valid: true}
			}
		}
		if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM customers WHERE dataset_id = ?`, imp.DatasetID).Scan(&customersTotal); err != nil {
			return err
		}
		var cfile any
		if st.CustomersFile != "" {
			cfile = st.CustomersFile
		}
		res, err := tx.ExecContext(ctx, `UPDATE versions SET state = 'ready', rows_read = ?, orders_added = ?,
			customers_added = ?, rows_skipped = ?, repeats_skipped = ?, customers_file = ?, customers_read = ?,
			orders_total = ?, customers_total = ?, first_day = ?, last_day = ?, finished_at = ?
			WHERE id = ? AND state = 'loading'`,
			st.RowsRead, st.OrdersAdded, st.CustomersAdded, st.RowsSkipped, st.RepeatsSkipped, cfile, st.CustomersRead,
			ordersTotal, customersTotal, first, last, s.stamp(), imp.VersionID)
		if err != nil {
			return err
		}
		if n, _ := res.RowsAffected(); n != 1 {
			return fmt.Errorf("version %d is no longer loading", imp.VersionID)
		}
		for _, name := range st.AttributeNames {
			if _, err := tx.ExecContext(ctx, `INSERT OR IGNORE INTO dataset_attributes (dataset_id, name) VALUES (?, ?)`, imp.DatasetID, name); err != nil {
				return err
			}
		}
		return updateCustomers(ctx, tx, imp.DatasetID, st.AttributeNames, st.Updates)
	})
	if err != nil {
		return fmt.Errorf("finish import of version %d: %w", imp.VersionID, err)
	}
	return nil
}

// AbortImport deletes a loading version with everything it wrote, and the
// dataset too when the import had created it.
func (s *Store) AbortImport(ctx context.Context, imp Import) error {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		if _, err := deleteVersions(ctx, tx, `id = ? AND state = 'loading'`, imp.VersionID); err != nil {
			return err
		}
		return deleteEmptyDatasets(ctx, tx)
	})
	if err != nil {
		return fmt.Errorf("abort import of version %d: %w", imp.VersionID, err)
	}
	return nil
}

// PurgeLoading deletes every version left loading (by a crash or a kill)
// and datasets left with no version; it runs at start-up, before any import
// can begin. It returns the number of versions removed.
func (s *Store) PurgeLoading(ctx context.Context) (int, error) {
	var n int64
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		var err error
		if n, err = deleteVersions(ctx, tx, `state = 'loading'`); err != nil {
			return err
		}
		return deleteEmptyDatasets(ctx, tx)
	})
	if err != nil {
		return 0, fmt.Errorf("purge loading versions: %w", err)
	}
	return int(n), nil
}

// deleteVersions deletes the versions matching cond with their orders
// (customers they added go by ON DELETE CASCADE) and returns how many.
func deleteVersions(ctx context.Context, tx *sql.Tx, cond string, args ...any) (int64, error) {
	rows, err := tx.QueryContext(ctx, `SELECT id FROM versions WHERE `+cond, args...)
	if err != nil {
		return 0, err
	}
	var ids []int64
	for rows.Next() {
		var id int64
		if err := rows.Scan(&id); err != nil {
			rows.Close()
			return 0, err
		}
		ids = append(ids, id)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return 0, err
	}
	for _, id := range ids {
		if _, err := tx.ExecContext(ctx, `DELETE FROM orders WHERE id BETWEEN ?1 << 32 AND (?1 << 32) + 4294967295`, id); err != nil {
			return 0, err
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM versions WHERE id = ?`, id); err != nil {
			return 0, err
		}
	}
	return int64(len(ids)), nil
}

func deleteEmptyDatasets(ctx context.Context, tx *sql.Tx) error {
	_, err := tx.ExecContext(ctx, `DELETE FROM datasets WHERE NOT EXISTS (SELECT 1 FROM versions WHERE dataset_id = datasets.id)`)
	return err
}

// Counts returns the number of datasets, versions (any state), customers and
// orders stored: a cheap whole-database fingerprint for tests and checks.
func (s *Store) Counts(ctx context.Context) (datasets, versions, customers, orders int, err error) {
	err = s.r.QueryRowContext(ctx, `SELECT (SELECT count(*) FROM datasets), (SELECT count(*) FROM versions),
		(SELECT count(*) FROM customers), (SELECT count(*) FROM orders)`).Scan(&datasets, &versions, &customers, &orders)
	return
}

// SetSalt replaces a dataset's salt, the key of its holdout and tie-break
// hashes. Only a dataset without lists may change it: a new salt draws a
// new holdout. The demo uses it so every demo draws the same holdout.
func (s *Store) SetSalt(ctx context.Context, datasetID int64, salt []byte) error {
	if len(salt) < 16 {
		return problem.New(problem.Invalid, "a salt needs at least 16 bytes")
	}
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		var n int
		if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM lists WHERE dataset_id = ?`, datasetID).Scan(&n); err != nil {
			return err
		}
		if n > 0 {
			return problem.New(problem.Conflict, "dataset %d has lists; changing its salt would change their holdout", datasetID)
		}
		res, err := tx.ExecContext(ctx, `UPDATE datasets SET salt = ? WHERE id = ?`, salt, datasetID)
		if err != nil {
			return err
		}
		if n, _ := res.RowsAffected(); n == 0 {
			return problem.New(problem.NotFound, "there is no dataset %d", datasetID)
		}
		return nil
	})
	if err != nil && problem.As(err) == nil {
		return fmt.Errorf("set salt of dataset %d: %w", datasetID, err)
	}
	return err
}
