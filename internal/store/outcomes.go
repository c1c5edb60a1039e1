package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"

	"ebb/internal/problem"
)

// Outcomes is a stored outcomes report; Report is JSON owned by
// internal/analysis.
type Outcomes struct {
	ID, DatasetID, VersionID int64
	Report                   []byte
	CreatedAt                time.Time
}

// SaveOutcomes stores a report; older ones are kept.
func (s *Store) SaveOutcomes(ctx context.Context, o Outcomes) error {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO outcome_reports (dataset_id, version_id, report, created_at) VALUES (?, ?, ?, ?)`,
			o.DatasetID, o.VersionID, string(o.Report), timeText(o.CreatedAt))
		return err
	})
	if err != nil {
		return fmt.Errorf("save outcomes of dataset %d: %w", o.DatasetID, err)
	}
	return nil
}

// LatestOutcomes returns the dataset's newest outcomes report.
func (s *Store) LatestOutcomes(ctx context.Context, datasetID int64) (Outcomes, error) {
	var o Outcomes
	var report, created string
	err := s.r.QueryRowContext(ctx, `SELECT id, dataset_id, version_id, report, created_at FROM outcome_reports
		WHERE dataset_id = ? ORDER BY id DESC LIMIT 1`, datasetID).Scan(&o.ID, &o.DatasetID, &o.VersionID, &report, &created)
	if errors.Is(err, sql.ErrNoRows) {
		return o, problem.New(problem.NotFound, "the outcomes of this dataset have not been measured yet")
	}
	if err != nil {
		return o, fmt.Errorf("outcomes of dataset %d: %w", datasetID, err)
	}
	o.Report, o.CreatedAt = []byte(report), parseTime(created)
	return o, nil
}
