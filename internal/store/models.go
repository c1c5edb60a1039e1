package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"

	"ebb/internal/problem"
)

// TrainingRun is a stored training run; Options and Report are JSON owned
// by internal/analysis.
type TrainingRun struct {
	ID, DatasetID, VersionID, DefinitionID int64
	Options, Report                        []byte
	CreatedBy                              string
	CreatedAt                              time.Time
	// Ranked and TestRows, when given, are stored with the run in the same
	// transaction (InsertTrainingRun), so a run is never half there.
	Ranked   []RankedList
	TestRows []byte
}

// StoredModel is a model offered for lists.
type StoredModel struct {
	ID, RunID, DatasetID int64
	Name, Kind           string
	Model, Summary       []byte
	InUse                bool
	CreatedAt            time.Time
}

// InsertTrainingRun stores a run with its models in one transaction; when
// useFirst is set and the dataset has no model in use, the first model
// given is marked in use. It returns the run and model ids.
func (s *Store) InsertTrainingRun(ctx context.Context, r TrainingRun, models []StoredModel, useFirst bool) (int64, []int64, error) {
	var runID int64
	var ids []int64
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `INSERT INTO training_runs (dataset_id, version_id, definition_id, options, report, created_by, created_at)
			VALUES (?, ?, ?, ?, ?, ?, ?)`, r.DatasetID, r.VersionID, r.DefinitionID, string(r.Options), string(r.Report), r.CreatedBy, timeText(r.CreatedAt))
		if err != nil {
			return err
		}
		runID, _ = res.LastInsertId()
		var inUse int
		if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM models WHERE dataset_id = ? AND in_use = 1`, r.DatasetID).Scan(&inUse); err != nil {
			return err
		}
		for i, m := range models {
			use := useFirst && inUse == 0 && i == 0
			res, err := tx.ExecContext(ctx, `INSERT INTO models (run_id, dataset_id, name, kind, model, summary, in_use, created_at)
				VALUES (?, ?, ?, ?, ?, ?, ?, ?)`, runID, r.DatasetID, m.Name, m.Kind, string(m.Model), string(m.Summary), use, timeText(r.CreatedAt))
			if err != nil {
				return err
			}
			id, _ := res.LastInsertId()
			ids = append(ids, id)
		}
		if err := insertRanked(ctx, tx, runID, r.Ranked); err != nil {
			return err
		}
		if r.TestRows != nil {
			if _, err := tx.ExecContext(ctx, `INSERT INTO run_test_rows (run_id, csv) VALUES (?, ?)`, runID, r.TestRows); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return 0, nil, fmt.Errorf("store training run of dataset %d: %w", r.DatasetID, err)
	}
	return runID, ids, nil
}

const modelColumns = `id, run_id, dataset_id, name, kind, model, summary, in_use, created_at`

func scanModel(sc interface{ Scan(...any) error }) (StoredModel, error) {
	var m StoredModel
	var model, summary, created string
	err := sc.Scan(&m.ID, &m.RunID, &m.DatasetID, &m.Name, &m.Kind, &model, &summary, &m.InUse, &created)
	m.Model, m.Summary, m.CreatedAt = []byte(model), []byte(summary), parseTime(created)
	return m, err
}

// Models lists a dataset's models, newest first.
func (s *Store) Models(ctx context.Context, datasetID int64) ([]StoredModel, error) {
	return s.models(ctx, `SELECT `+modelColumns+` FROM models WHERE dataset_id = ? ORDER BY id DESC`, datasetID)
}

// models runs a query of modelColumns' shape.
func (s *Store) models(ctx context.Context, query string, datasetID int64) ([]StoredModel, error) {
	rows, err := s.r.QueryContext(ctx, query, datasetID)
	if err != nil {
		return nil, fmt.Errorf("list models of dataset %d: %w", datasetID, err)
	}
	defer rows.Close()
	var out []StoredModel
	for rows.Next() {
		m, err := scanModel(rows)
		if err != nil {
			return nil, fmt.Errorf("list models of dataset %d: %w", datasetID, err)
		}
		if len(m.Model) == 0 {
			m.Model = nil
		}
		out = append(out, m)
	}
	return out, rows.Err()
}

// ModelByID returns one model.
func (s *Store) ModelByID(ctx context.Context, id int64) (StoredModel, error) {
	m, err := scanModel(s.r.QueryRowContext(ctx, `SELECT `+modelColumns+` FROM models WHERE id = ?`, id))
	if errors.Is(err, sql.ErrNoRows) {
		return m, problem.New(problem.NotFound, "there is no model %d", id)
	}
	if err != nil {
		return m, fmt.Errorf("model %d: %w", id, err)
	}
	return m, nil
}

// UseModel marks a model as the one its dataset's lists use.
func (s *Store) UseModel(ctx context.Context, id int64) error {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		var dataset int64
		if err := tx.QueryRowContext(ctx, `SELECT dataset_id FROM models WHERE id = ?`, id).Scan(&dataset); errors.Is(err, sql.ErrNoRows) {
			return problem.New(problem.NotFound, "there is no model %d", id)
		} else if err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, `UPDATE models SET in_use = 0 WHERE dataset_id = ? AND in_use = 1`, dataset); err != nil {
			return err
		}
		_, err := tx.ExecContext(ctx, `UPDATE models SET in_use = 1 WHERE id = ?`, id)
		return err
	})
	if err != nil && problem.As(err) == nil {
		return fmt.Errorf("use model %d: %w", id, err)
	}
	return err
}

// LatestTrainingRun returns the dataset's newest training run.
func (s *Store) LatestTrainingRun(ctx context.Context, datasetID int64) (TrainingRun, error) {
	var r TrainingRun
	var opts, report, created string
	err := s.r.QueryRowContext(ctx, `SELECT id, dataset_id, version_id, definition_id, options, report, created_by, created_at
		FROM training_runs WHERE dataset_id = ? ORDER BY id DESC LIMIT 1`, datasetID).
		Scan(&r.ID, &r.DatasetID, &r.VersionID, &r.DefinitionID, &opts, &report, &r.CreatedBy, &created)
	if errors.Is(err, sql.ErrNoRows) {
		return r, problem.New(problem.NotFound, "no model has been trained on this dataset yet")
	}
	if err != nil {
		return r, fmt.Errorf("latest training run of dataset %d: %w", datasetID, err)
	}
	r.Options, r.Report, r.CreatedAt = []byte(opts), []byte(report), parseTime(created)
	return r, nil
}

// RankedList is one model's ranking of the customers scored on one test
// date; Data is owned by internal/analysis.
type RankedList struct {
	Model     string
	Day       string
	Customers int
	Positives int
	Data      []byte
}

func insertRanked(ctx context.Context, tx *sql.Tx, runID int64, lists []RankedList) error {
	if len(lists) == 0 {
		return nil
	}
	ins, err := tx.PrepareContext(ctx, `INSERT INTO ranked_lists (run_id, model, day, customers, positives, data) VALUES (?, ?, ?, ?, ?, ?)`)
	if err != nil {
		return err
	}
	defer ins.Close()
	for _, l := range lists {
		if _, err := ins.ExecContext(ctx, runID, l.Model, l.Day, l.Customers, l.Positives, l.Data); err != nil {
			return err
		}
	}
	return nil
}

// RankedLists returns a run's rankings of one model, by date.
func (s *Store) RankedLists(ctx context.Context, runID int64, model string) ([]RankedList, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT model, day, customers, positives, data FROM ranked_lists WHERE run_id = ? AND model = ? ORDER BY day`, runID, model)
	if err != nil {
		return nil, fmt.Errorf("ranked lists of run %d: %w", runID, err)
	}
	defer rows.Close()
	var out []RankedList
	for rows.Next() {
		var l RankedList
		if err := rows.Scan(&l.Model, &l.Day, &l.Customers, &l.Positives, &l.Data); err != nil {
			return nil, err
		}
		out = append(out, l)
	}
	return out, rows.Err()
}

// TestRows returns a run's evaluated test rows as CSV.
func (s *Store) TestRows(ctx context.Context, runID int64) ([]byte, error) {
	var b []byte
	err := s.r.QueryRowContext(ctx, `SELECT csv FROM run_test_rows WHERE run_id = ?`, runID).Scan(&b)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, problem.New(problem.NotFound, "this training run kept no test rows")
	}
	if err != nil {
		return nil, fmt.Errorf("test rows of run %d: %w", runID, err)
	}
	return b, nil
}

// LatestTrainingRunID returns the id of the dataset's newest training run.
func (s *Store) LatestTrainingRunID(ctx context.Context, datasetID int64) (int64, error) {
	var id int64
	err := s.r.QueryRowContext(ctx, `SELECT id FROM training_runs WHERE dataset_id = ? ORDER BY id DESC LIMIT 1`, datasetID).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, problem.New(problem.NotFound, "no model has been trained on this dataset yet")
	}
	if err != nil {
		return 0, fmt.Errorf("latest training run of dataset %d: %w", datasetID, err)
	}
	return id, nil
}

// ModelsBrief lists a dataset's models, newest first, without the models
// themselves (only their summaries), for pages that list them.
func (s *Store) ModelsBrief(ctx context.Context, datasetID int64) ([]StoredModel, error) {
	return s.models(ctx, `SELECT id, run_id, dataset_id, name, kind, '', summary, in_use, created_at FROM models WHERE dataset_id = ? ORDER BY id DESC`, datasetID)
}
