package store

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"time"

	"ebb/internal/civil"
	"ebb/internal/problem"
)

// List is a stored at-risk list; Summary is JSON owned by
// internal/analysis.
type List struct {
	ID, DatasetID, VersionID, ModelID int64
	AsOf, DataThrough                 civil.Date
	Published                         bool
	Summary                           []byte
	CreatedBy                         string
	CreatedAt                         time.Time
	PublishedBy                       string
	PublishedAt                       time.Time
}

// Row statuses of a list's customers (list_rows.status).
const (
	RowScored         = 0 // scored, not selected
	RowContact        = 1 // selected, to be contacted
	RowHoldout        = 2 // selected, withheld as holdout
	RowNotContactable = 3 // may not receive marketing
)

// ListRow is one scored customer of a list.
type ListRow struct {
	Rank        int // 1 = highest risk
	Customer    int32
	Probability float64
	Band        int // 0 low, 1 medium, 2 high
	Status      int // RowScored …
	Reasons     string
}

// ListedCustomer is a list row with the customer's details.
type ListedCustomer struct {
	ListRow
	Key, Email string
	// AttributesJSON is the customer's attributes as stored (a JSON object,
	// "" for none; ListRows fills it); Attributes decodes it, only when
	// asked, since most readers of a list never look.
	AttributesJSON string
	// AttrValues are the attributes EachListRowWith was asked for.
	AttrValues []string
}

// Attributes decodes the customer's attributes (nil for none).
func (c ListedCustomer) Attributes() (map[string]string, error) {
	if c.AttributesJSON == "" {
		return nil, nil
	}
	var m map[string]string
	if err := json.Unmarshal([]byte(c.AttributesJSON), &m); err != nil {
		return nil, fmt.Errorf("attributes of customer %s: %w", c.Key, err)
	}
	return m, nil
}

const listColumns = `id, dataset_id, version_id, model_id, as_of, data_through, state, summary, created_by, created_at,
	COALESCE(published_by, ''), COALESCE(published_at, '')`

func scanList(sc interface{ Scan(...any) error }) (List, error) {
	var l List
	var asOf, through, state, summary, created, published string
	err := sc.Scan(&l.ID, &l.DatasetID, &l.VersionID, &l.ModelID, &asOf, &through, &state, &summary, &l.CreatedBy, &created, &l.PublishedBy, &published)
	if err != nil {
		return l, err
	}
	l.Published, l.Summary, l.CreatedAt = state == "published", []byte(summary), parseTime(created)
	if published != "" {
		l.PublishedAt = parseTime(published)
	}
	if l.AsOf, err = civil.Parse(asOf); err != nil {
		return l, err
	}
	l.DataThrough, err = civil.Parse(through)
	return l, err
}

// InsertList stores a draft list with all its rows in one transaction.
func (s *Store) InsertList(ctx context.Context, l List, rows []ListRow) (int64, error) {
	var id int64
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `INSERT INTO lists (dataset_id, version_id, model_id, as_of, data_through, state, summary, created_by, created_at)
			VALUES (?, ?, ?, ?, ?, 'draft', ?, ?, ?)`, l.DatasetID, l.VersionID, l.ModelID, l.AsOf.String(), l.DataThrough.String(),
			string(l.Summary), l.CreatedBy, timeText(l.CreatedAt))
		if err != nil {
			return err
		}
		id, _ = res.LastInsertId()
		const perInsert = 500
		head, row := `INSERT INTO list_rows (list_id, rank, customer_id, probability, band, status, reasons) VALUES `, "(?,?,?,?,?,?,?)"
		// One statement compiled for every full chunk of rows.
		full, err := tx.PrepareContext(ctx, multiInsert(head, row, perInsert))
		if err != nil {
			return err
		}
		defer full.Close()
		args := make([]any, 0, 7*perInsert)
		flush := func() error {
			var err error
			switch n := len(args) / 7; n {
			case 0:
				return nil
			case perInsert:
				_, err = full.ExecContext(ctx, args...)
			default:
				_, err = tx.ExecContext(ctx, multiInsert(head, row, n), args...)
			}
			args = args[:0]
			return err
		}
		for _, r := range rows {
			args = append(args, id, r.Rank, r.Customer, r.Probability, r.Band, r.Status, r.Reasons)
			if len(args) == cap(args) {
				if err := flush(); err != nil {
					return err
				}
			}
		}
		return flush()
	})
	if err != nil {
		return 0, fmt.Errorf("store list of dataset %d: %w", l.DatasetID, err)
	}
	return id, nil
}

// PublishList makes a draft list published, dated at. A published list
// cannot be published again or changed.
func (s *Store) PublishList(ctx context.Context, id int64, by string, at time.Time) error {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		state, err := listState(ctx, tx, id)
		if err != nil {
			return err
		}
		if state == "published" {
			return problem.New(problem.Conflict, "list %d is already published; a published list never changes", id)
		}
		_, err = tx.ExecContext(ctx, `UPDATE lists SET state = 'published', published_by = ?, published_at = ? WHERE id = ? AND state = 'draft'`,
			by, timeText(at), id)
		return err
	})
	if err != nil && problem.As(err) == nil {
		return fmt.Errorf("publish list %d: %w", id, err)
	}
	return err
}

// listState reads a list's state inside a write transaction.
func listState(ctx context.Context, tx *sql.Tx, id int64) (string, error) {
	var state string
	err := tx.QueryRowContext(ctx, `SELECT state FROM lists WHERE id = ?`, id).Scan(&state)
	if errors.Is(err, sql.ErrNoRows) {
		return "", problem.New(problem.NotFound, "there is no list %d", id)
	}
	return state, err
}

// DeleteDraftList discards a draft; published lists are kept for ever.
func (s *Store) DeleteDraftList(ctx context.Context, id int64) error {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		state, err := listState(ctx, tx, id)
		if err != nil {
			return err
		}
		if state != "draft" {
			return problem.New(problem.Conflict, "list %d is published; published lists are kept", id)
		}
		_, err = tx.ExecContext(ctx, `DELETE FROM lists WHERE id = ? AND state = 'draft'`, id)
		return err
	})
	if err != nil && problem.As(err) == nil {
		return fmt.Errorf("discard list %d: %w", id, err)
	}
	return err
}

// ListByID returns one list.
func (s *Store) ListByID(ctx context.Context, id int64) (List, error) {
	l, err := scanList(s.r.QueryRowContext(ctx, `SELECT `+listColumns+` FROM lists WHERE id = ?`, id))
	if errors.Is(err, sql.ErrNoRows) {
		return l, problem.New(problem.NotFound, "there is no list %d", id)
	}
	if err != nil {
		return l, fmt.Errorf("list %d: %w", id, err)
	}
	return l, nil
}

// Lists returns a dataset's lists, newest first; drafts only when
// withDrafts.
func (s *Store) Lists(ctx context.Context, datasetID int64, withDrafts bool) ([]List, error) {
	q := `SELECT ` + listColumns + ` FROM lists WHERE dataset_id = ? AND (state = 'published' OR ?) ORDER BY id DESC`
	rows, err := s.r.QueryContext(ctx, q, datasetID, withDrafts)
	if err != nil {
		return nil, fmt.Errorf("lists of dataset %d: %w", datasetID, err)
	}
	defer rows.Close()
	var out []List
	for rows.Next() {
		l, err := scanList(rows)
		if err != nil {
			return nil, fmt.Errorf("lists of dataset %d: %w", datasetID, err)
		}
		out = append(out, l)
	}
	return out, rows.Err()
}

// LatestPublishedList returns the dataset's newest published list.
func (s *Store) LatestPublishedList(ctx context.Context, datasetID int64) (List, error) {
	l, err := scanList(s.r.QueryRowContext(ctx, `SELECT `+listColumns+` FROM lists
		WHERE dataset_id = ? AND state = 'published' ORDER BY published_at DESC, id DESC LIMIT 1`, datasetID))
	if errors.Is(err, sql.ErrNoRows) {
		return l, problem.New(problem.NotFound, "no list of this dataset has been published yet")
	}
	if err != nil {
		return l, fmt.Errorf("latest published list of dataset %d: %w", datasetID, err)
	}
	return l, nil
}

// ListFilter selects and orders a page of a list's customers.
type ListFilter struct {
	ListID    int64
	DatasetID int64
	// Search matches the customer key or email exactly, ignoring case.
	Search string
	Band   int   // -1: every band
	Status []int // empty: every status
	// AttrName and AttrValue keep customers whose attribute equals the value.
	AttrName, AttrValue string
	ByKey               bool // order by customer key instead of rank
	Offset, Limit       int
	// KnownTotal skips counting the matches (a caller that counted this
	// filter before passes the count it got); ListRows then returns -1.
	KnownTotal bool
}

// ListRows returns one page of a list's customers and how many match.
func (s *Store) ListRows(ctx context.Context, f ListFilter) ([]ListedCustomer, int, error) {
	where, args := listWhere(f)
	total := -1
	var err error
	switch {
	case f.KnownTotal:
	case f.Search == "" && f.AttrName == "":
		// Nothing to match on the customers: count the list's rows alone.
		err = s.r.QueryRowContext(ctx, `SELECT count(*) FROM list_rows r WHERE `+where, args...).Scan(&total)
	default:
		err = s.r.QueryRowContext(ctx, `SELECT count(*) FROM list_rows r JOIN customers c ON c.dataset_id = ? AND c.id = r.customer_id WHERE `+where,
			append([]any{f.DatasetID}, args...)...).Scan(&total)
	}
	if err != nil {
		return nil, 0, fmt.Errorf("count rows of list %d: %w", f.ListID, err)
	}
	order := "r.rank"
	if f.ByKey {
		order = "c.key"
	}
	limit := f.Limit
	if limit <= 0 {
		limit = 100
	}
	q := `SELECT ` + listedColumns + ` FROM list_rows r JOIN customers c ON c.dataset_id = ? AND c.id = r.customer_id WHERE ` + where +
		` ORDER BY ` + order + ` LIMIT ? OFFSET ?`
	rows, err := s.r.QueryContext(ctx, q, append(append([]any{f.DatasetID}, args...), limit, max(f.Offset, 0))...)
	if err != nil {
		return nil, 0, fmt.Errorf("rows of list %d: %w", f.ListID, err)
	}
	defer rows.Close()
	var out []ListedCustomer
	for rows.Next() {
		c, err := scanListed(rows)
		if err != nil {
			return nil, 0, fmt.Errorf("rows of list %d: %w", f.ListID, err)
		}
		out = append(out, c)
	}
	return out, total, rows.Err()
}

// EachListRow calls fn for every customer of a list with one of the given
// statuses, in rank order, reading as it goes (memory stays flat however
// long the list). fn's error stops the walk and is returned.
func (s *Store) EachListRow(ctx context.Context, datasetID, listID int64, statuses []int, fn func(ListedCustomer) error) error {
	return s.EachListRowWith(ctx, datasetID, listID, statuses, nil, fn)
}

// EachListRowWith is EachListRow that also reads the named attributes of
// each customer into AttrValues, in order ("" where unset); SQLite picks
// them out of the stored JSON.
func (s *Store) EachListRowWith(ctx context.Context, datasetID, listID int64, statuses []int, attrs []string, fn func(ListedCustomer) error) error {
	where, args := listWhere(ListFilter{ListID: listID, Band: -1, Status: statuses})
	cols := listedBase
	var colArgs []any
	for _, a := range attrs {
		cols += attrColumn
		colArgs = append(colArgs, attrPath(a))
	}
	// Through the driver directly: a long export reads hundreds of
	// thousands of rows, and database/sql's per-row conversions cost as much
	// as SQLite's reading.
	err := s.readRaw(ctx, func(q driver.ConnPrepareContext) error {
		return rawQuery(ctx, q, `SELECT `+cols+` FROM list_rows r JOIN customers c ON c.dataset_id = ? AND c.id = r.customer_id
			WHERE `+where+` ORDER BY r.rank`, append(append(colArgs, datasetID), args...), func(row []driver.Value) error {
			c, err := listedFromRaw(row)
			if err != nil {
				return err
			}
			if len(attrs) > 0 {
				c.AttrValues = make([]string, len(attrs))
				for k := range attrs {
					c.AttrValues[k] = rawString(row[8+k])
				}
			}
			return fn(c)
		})
	})
	if err != nil && problem.As(err) == nil {
		return fmt.Errorf("read list %d: %w", listID, err)
	}
	return err
}

// listedBase are the columns every list read takes; attrColumn is one
// attribute picked out of the customer's JSON, its path a placeholder.
const (
	listedBase = `r.rank, r.customer_id, r.probability, r.band, r.status, r.reasons, c.key, COALESCE(c.email, '')`
	attrColumn = `, COALESCE(json_extract(c.attributes, ?), '')`
)

// attrPath is the JSON path of an attribute name (quoted, so any name
// works; a double quote cannot be part of a name in a path).
func attrPath(name string) string { return `$."` + strings.ReplaceAll(name, `"`, ``) + `"` }

// listedFromRaw converts a driver row of listedColumns.
func listedFromRaw(row []driver.Value) (ListedCustomer, error) {
	var c ListedCustomer
	rank, ok1 := row[0].(int64)
	cust, ok2 := row[1].(int64)
	prob, ok3 := row[2].(float64)
	band, ok4 := row[3].(int64)
	status, ok5 := row[4].(int64)
	if !ok1 || !ok2 || !ok3 || !ok4 || !ok5 {
		return c, fmt.Errorf("list row %v has unexpected column types", row[:5])
	}
	c.Rank, c.Customer, c.Probability, c.Band, c.Status = int(rank), int32(cust), prob, int(band), int(status)
	c.Reasons, c.Key, c.Email = rawString(row[5]), rawString(row[6]), rawString(row[7])
	return c, nil
}

// rawString reads a TEXT value of a driver row ("" for NULL).
func rawString(v driver.Value) string {
	switch x := v.(type) {
	case string:
		return x
	case []byte:
		return string(x)
	}
	return ""
}

// listedColumns are listedBase and the customer's attributes as stored.
const listedColumns = listedBase + `, COALESCE(c.attributes, '')`

func scanListed(sc interface{ Scan(...any) error }) (ListedCustomer, error) {
	var c ListedCustomer
	err := sc.Scan(&c.Rank, &c.Customer, &c.Probability, &c.Band, &c.Status, &c.Reasons, &c.Key, &c.Email, &c.AttributesJSON)
	return c, err
}

// listWhere builds the filter's WHERE clause from fixed fragments; every
// value is a placeholder argument.
func listWhere(f ListFilter) (string, []any) {
	conds := []string{"r.list_id = ?"}
	args := []any{f.ListID}
	if f.Search != "" {
		conds = append(conds, "(c.key = ? COLLATE NOCASE OR c.email = ? COLLATE NOCASE)")
		args = append(args, f.Search, f.Search)
	}
	if f.Band >= 0 {
		conds = append(conds, "r.band = ?")
		args = append(args, f.Band)
	}
	if len(f.Status) > 0 {
		conds = append(conds, "r.status IN ("+strings.TrimSuffix(strings.Repeat("?,", len(f.Status)), ",")+")")
		for _, st := range f.Status {
			args = append(args, st)
		}
	}
	if f.AttrName != "" {
		conds = append(conds, "json_extract(c.attributes, ?) = ?")
		args = append(args, attrPath(f.AttrName), f.AttrValue)
	}
	return strings.Join(conds, " AND "), args
}

// ListCustomers returns the customers of a list with one of the given
// statuses.
func (s *Store) ListCustomers(ctx context.Context, listID int64, statuses ...int) ([]int32, error) {
	where, args := listWhere(ListFilter{ListID: listID, Band: -1, Status: statuses})
	rows, err := s.r.QueryContext(ctx, `SELECT r.customer_id FROM list_rows r WHERE `+where+` ORDER BY r.rank`, args...)
	if err != nil {
		return nil, fmt.Errorf("customers of list %d: %w", listID, err)
	}
	defer rows.Close()
	var out []int32
	for rows.Next() {
		var c int32
		if err := rows.Scan(&c); err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

// HeldOutSince returns the customers withheld as holdout on any published
// list of the dataset dated on or after from.
func (s *Store) HeldOutSince(ctx context.Context, datasetID int64, from civil.Date) (map[int32]bool, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT DISTINCT r.customer_id FROM lists l JOIN list_rows r ON r.list_id = l.id
		WHERE l.dataset_id = ? AND l.state = 'published' AND l.as_of >= ? AND r.status = ?`, datasetID, from.String(), RowHoldout)
	if err != nil {
		return nil, fmt.Errorf("holdout of dataset %d since %s: %w", datasetID, from, err)
	}
	defer rows.Close()
	out := map[int32]bool{}
	for rows.Next() {
		var c int32
		if err := rows.Scan(&c); err != nil {
			return nil, err
		}
		out[c] = true
	}
	return out, rows.Err()
}

// CustomerContact is what lists need of a customer besides the orders.
type CustomerContact struct {
	Key, Email  string
	Contactable bool
}

// CustomerContacts returns every customer of a dataset by dense id: key,
// email and whether they may be contacted. It reads through the driver
// directly (a dataset can hold millions of customers).
func (s *Store) CustomerContacts(ctx context.Context, datasetID int64) ([]CustomerContact, error) {
	var out []CustomerContact
	err := s.readRaw(ctx, func(q driver.ConnPrepareContext) error {
		return rawQuery(ctx, q, `SELECT id, key, COALESCE(email, ''), contactable FROM customers WHERE dataset_id = ? ORDER BY id`, []any{datasetID},
			func(row []driver.Value) error {
				id, ok1 := row[0].(int64)
				ok, ok2 := row[3].(int64)
				if !ok1 || !ok2 || id != int64(len(out)) {
					return fmt.Errorf("customer row %v out of sequence or of unexpected types", row)
				}
				out = append(out, CustomerContact{Key: rawString(row[1]), Email: rawString(row[2]), Contactable: ok != 0})
				return nil
			})
	})
	if err != nil {
		return nil, fmt.Errorf("customers of dataset %d: %w", datasetID, err)
	}
	return out, nil
}

// TrainingRunByID returns one training run.
func (s *Store) TrainingRunByID(ctx context.Context, id int64) (TrainingRun, error) {
	var r TrainingRun
	var opts, report, created string
	err := s.r.QueryRowContext(ctx, `SELECT id, dataset_id, version_id, definition_id, options, report, created_by, created_at
		FROM training_runs WHERE id = ?`, id).
		Scan(&r.ID, &r.DatasetID, &r.VersionID, &r.DefinitionID, &opts, &report, &r.CreatedBy, &created)
	if errors.Is(err, sql.ErrNoRows) {
		return r, problem.New(problem.NotFound, "there is no training run %d", id)
	}
	if err != nil {
		return r, fmt.Errorf("training run %d: %w", id, err)
	}
	r.Options, r.Report, r.CreatedAt = []byte(opts), []byte(report), parseTime(created)
	return r, nil
}

// Contacts returns, for every customer contacted by a published list of the
// dataset, the dates of those lists (ascending).
func (s *Store) Contacts(ctx context.Context, datasetID int64) (map[int32][]civil.Date, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT r.customer_id, l.as_of FROM lists l JOIN list_rows r ON r.list_id = l.id
		WHERE l.dataset_id = ? AND l.state = 'published' AND r.status = ? ORDER BY l.as_of`, datasetID, RowContact)
	if err != nil {
		return nil, fmt.Errorf("contacts of dataset %d: %w", datasetID, err)
	}
	defer rows.Close()
	out := map[int32][]civil.Date{}
	for rows.Next() {
		var c int32
		var day string
		if err := rows.Scan(&c, &day); err != nil {
			return nil, err
		}
		d, err := civil.Parse(day)
		if err != nil {
			return nil, err
		}
		out[c] = append(out[c], d)
	}
	return out, rows.Err()
}
