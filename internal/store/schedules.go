package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"

	"ebb/internal/problem"
)

// Schedule is a dataset's weekly list run; Rule is JSON owned by
// internal/analysis. LastRunAt is the last scheduled slot handled (zero
// when none).
type Schedule struct {
	DatasetID int64
	Weekday   time.Weekday
	At        string // HH:MM, UTC
	Publish   bool
	Rule      []byte
	Enabled   bool
	CreatedBy string
	CreatedAt time.Time
	LastRunAt time.Time
	LastNote  string
}

const scheduleColumns = `dataset_id, weekday, at, publish, rule, enabled, created_by, created_at, COALESCE(last_run_at, ''), COALESCE(last_note, '')`

func scanSchedule(sc interface{ Scan(...any) error }) (Schedule, error) {
	var s Schedule
	var wd int
	var rule, created, last string
	err := sc.Scan(&s.DatasetID, &wd, &s.At, &s.Publish, &rule, &s.Enabled, &s.CreatedBy, &created, &last, &s.LastNote)
	s.Weekday, s.Rule, s.CreatedAt = time.Weekday(wd), []byte(rule), parseTime(created)
	if last != "" {
		s.LastRunAt = parseTime(last)
	}
	return s, err
}

// SaveSchedule creates or replaces a dataset's schedule. Replacing keeps
// the record of the last slot handled, so changing the time does not re-run
// a slot already done.
func (s *Store) SaveSchedule(ctx context.Context, sc Schedule) error {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO schedules (dataset_id, weekday, at, publish, rule, enabled, created_by, created_at)
			VALUES (?, ?, ?, ?, ?, ?, ?, ?)
			ON CONFLICT (dataset_id) DO UPDATE SET weekday = excluded.weekday, at = excluded.at, publish = excluded.publish,
				rule = excluded.rule, enabled = excluded.enabled, created_by = excluded.created_by, created_at = excluded.created_at`,
			sc.DatasetID, int(sc.Weekday), sc.At, sc.Publish, string(sc.Rule), sc.Enabled, sc.CreatedBy, timeText(sc.CreatedAt))
		return err
	})
	if err != nil {
		return fmt.Errorf("save schedule of dataset %d: %w", sc.DatasetID, err)
	}
	return nil
}

// ScheduleOf returns a dataset's schedule.
func (s *Store) ScheduleOf(ctx context.Context, datasetID int64) (Schedule, error) {
	sc, err := scanSchedule(s.r.QueryRowContext(ctx, `SELECT `+scheduleColumns+` FROM schedules WHERE dataset_id = ?`, datasetID))
	if errors.Is(err, sql.ErrNoRows) {
		return sc, problem.New(problem.NotFound, "dataset %d has no schedule", datasetID)
	}
	if err != nil {
		return sc, fmt.Errorf("schedule of dataset %d: %w", datasetID, err)
	}
	return sc, nil
}

// Schedules returns every enabled schedule.
func (s *Store) Schedules(ctx context.Context) ([]Schedule, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT `+scheduleColumns+` FROM schedules WHERE enabled = 1 ORDER BY dataset_id`)
	if err != nil {
		return nil, fmt.Errorf("schedules: %w", err)
	}
	defer rows.Close()
	var out []Schedule
	for rows.Next() {
		sc, err := scanSchedule(rows)
		if err != nil {
			return nil, fmt.Errorf("schedules: %w", err)
		}
		out = append(out, sc)
	}
	return out, rows.Err()
}

// MarkScheduleRun records that the slot at was handled, with a note.
func (s *Store) MarkScheduleRun(ctx context.Context, datasetID int64, at time.Time, note string) error {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `UPDATE schedules SET last_run_at = ?, last_note = ? WHERE dataset_id = ?`, timeText(at), note, datasetID)
		return err
	})
	if err != nil {
		return fmt.Errorf("mark schedule of dataset %d: %w", datasetID, err)
	}
	return nil
}

// LatestList returns the dataset's newest list, draft or published.
func (s *Store) LatestList(ctx context.Context, datasetID int64) (List, error) {
	l, err := scanList(s.r.QueryRowContext(ctx, `SELECT `+listColumns+` FROM lists WHERE dataset_id = ? ORDER BY id DESC LIMIT 1`, datasetID))
	if errors.Is(err, sql.ErrNoRows) {
		return l, problem.New(problem.NotFound, "dataset %d has no list yet", datasetID)
	}
	if err != nil {
		return l, fmt.Errorf("latest list of dataset %d: %w", datasetID, err)
	}
	return l, nil
}
