package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"

	"ebb/internal/problem"
)

// WindowRun is a stored churn-window derivation. Options and Report are
// JSON documents owned by internal/analysis.
type WindowRun struct {
	ID          int64
	DatasetID   int64
	VersionID   int64
	DataThrough string
	Options     []byte
	Report      []byte
	CreatedBy   string
	CreatedAt   time.Time
}

// InsertWindowRun stores a derivation and returns its id.
func (s *Store) InsertWindowRun(ctx context.Context, r WindowRun) (int64, error) {
	res, err := s.w.ExecContext(ctx, `INSERT INTO window_runs (dataset_id, version_id, data_through, options, report, created_by, created_at)
		VALUES (?, ?, ?, ?, ?, ?, ?)`, r.DatasetID, r.VersionID, r.DataThrough, string(r.Options), string(r.Report), r.CreatedBy, timeText(r.CreatedAt))
	if err != nil {
		return 0, fmt.Errorf("insert window run of dataset %d: %w", r.DatasetID, err)
	}
	return res.LastInsertId()
}

// LatestWindowRun returns the dataset's newest derivation.
func (s *Store) LatestWindowRun(ctx context.Context, datasetID int64) (WindowRun, error) {
	return s.windowRun(ctx, `dataset_id = ? ORDER BY id DESC LIMIT 1`, datasetID)
}

// WindowRunByID returns one derivation.
func (s *Store) WindowRunByID(ctx context.Context, id int64) (WindowRun, error) {
	return s.windowRun(ctx, `id = ?`, id)
}

func (s *Store) windowRun(ctx context.Context, where string, arg any) (WindowRun, error) {
	var r WindowRun
	var opts, report, created string
	err := s.r.QueryRowContext(ctx, `SELECT id, dataset_id, version_id, data_through, options, report, created_by, created_at
		FROM window_runs WHERE `+where, arg).Scan(&r.ID, &r.DatasetID, &r.VersionID, &r.DataThrough, &opts, &report, &r.CreatedBy, &created)
	if errors.Is(err, sql.ErrNoRows) {
		return r, problem.New(problem.NotFound, "the churn window has not been derived yet")
	}
	if err != nil {
		return r, fmt.Errorf("window run: %w", err)
	}
	r.Options, r.Report, r.CreatedAt = []byte(opts), []byte(report), parseTime(created)
	return r, nil
}

// Definition is a saved churn definition.
type Definition struct {
	ID           int64
	DatasetID    int64
	Seq          int
	WindowDays   int // X
	HorizonDays  int // H
	Method       string
	Percentile   float64
	LookbackDays int
	DerivedDays  int   // 0 when unknown
	RunID        int64 // 0 when none
	VersionID    int64
	Rationale    string
	CreatedBy    string
	CreatedAt    time.Time
}

// InsertDefinition saves a new definition version, which becomes current.
func (s *Store) InsertDefinition(ctx context.Context, d Definition) (Definition, error) {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		if err := tx.QueryRowContext(ctx, `SELECT COALESCE(max(seq), 0) + 1 FROM churn_definitions WHERE dataset_id = ?`, d.DatasetID).Scan(&d.Seq); err != nil {
			return err
		}
		var derived, run any
		if d.DerivedDays > 0 {
			derived = d.DerivedDays
		}
		if d.RunID > 0 {
			run = d.RunID
		}
		res, err := tx.ExecContext(ctx, `INSERT INTO churn_definitions (dataset_id, seq, window_days, horizon_days, method, percentile,
			lookback_days, derived_days, run_id, version_id, rationale, created_by, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
			d.DatasetID, d.Seq, d.WindowDays, d.HorizonDays, d.Method, d.Percentile, d.LookbackDays, derived, run, d.VersionID,
			d.Rationale, d.CreatedBy, timeText(d.CreatedAt))
		if err != nil {
			return err
		}
		d.ID, _ = res.LastInsertId()
		return nil
	})
	if err != nil {
		return d, fmt.Errorf("save churn definition of dataset %d: %w", d.DatasetID, err)
	}
	return d, nil
}

// Definitions lists a dataset's definitions, newest (the current one) first.
func (s *Store) Definitions(ctx context.Context, datasetID int64) ([]Definition, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT id, dataset_id, seq, window_days, horizon_days, method, percentile, lookback_days,
		COALESCE(derived_days, 0), COALESCE(run_id, 0), version_id, rationale, created_by, created_at
		FROM churn_definitions WHERE dataset_id = ? ORDER BY seq DESC`, datasetID)
	if err != nil {
		return nil, fmt.Errorf("list churn definitions of dataset %d: %w", datasetID, err)
	}
	defer rows.Close()
	var out []Definition
	for rows.Next() {
		var d Definition
		var created string
		if err := rows.Scan(&d.ID, &d.DatasetID, &d.Seq, &d.WindowDays, &d.HorizonDays, &d.Method, &d.Percentile, &d.LookbackDays,
			&d.DerivedDays, &d.RunID, &d.VersionID, &d.Rationale, &d.CreatedBy, &created); err != nil {
			return nil, fmt.Errorf("list churn definitions of dataset %d: %w", datasetID, err)
		}
		d.CreatedAt = parseTime(created)
		out = append(out, d)
	}
	return out, rows.Err()
}

// CurrentDefinition returns the dataset's newest definition.
func (s *Store) CurrentDefinition(ctx context.Context, datasetID int64) (Definition, error) {
	ds, err := s.Definitions(ctx, datasetID)
	if err != nil {
		return Definition{}, err
	}
	if len(ds) == 0 {
		return Definition{}, problem.New(problem.NotFound, "no churn definition has been saved for this dataset")
	}
	return ds[0], nil
}

// AttributeNames lists the attribute columns stored for a dataset's
// customers, by name.
func (s *Store) AttributeNames(ctx context.Context, datasetID int64) ([]string, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT name FROM dataset_attributes WHERE dataset_id = ? ORDER BY name`, datasetID)
	if err != nil {
		return nil, fmt.Errorf("attribute names of dataset %d: %w", datasetID, err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var n string
		if err := rows.Scan(&n); err != nil {
			return nil, err
		}
		out = append(out, n)
	}
	return out, rows.Err()
}

// CustomerAttribute returns every customer's value of one attribute, by
// dense customer id (n ids; "" where unset).
func (s *Store) CustomerAttribute(ctx context.Context, datasetID int64, name string, n int) ([]string, error) {
	out := make([]string, n)
	rows, err := s.r.QueryContext(ctx, `SELECT id, json_extract(attributes, ?) FROM customers
		WHERE dataset_id = ? AND attributes IS NOT NULL`, `$."`+name+`"`, datasetID)
	if err != nil {
		return nil, fmt.Errorf("attribute %q of dataset %d: %w", name, datasetID, err)
	}
	defer rows.Close()
	for rows.Next() {
		var id int
		var v sql.NullString
		if err := rows.Scan(&id, &v); err != nil {
			return nil, err
		}
		if id >= 0 && id < n {
			out[id] = v.String
		}
	}
	return out, rows.Err()
}
