package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"

	"ebb/internal/jobs"
	"ebb/internal/problem"
)

var _ jobs.Storage = (*Store)(nil)

const jobColumns = `id, kind, dataset_id, params, status, progress, message, error, result,
	created_by, created_at, started_at, finished_at, rerun_of`

// jobStamp is a job time as stored: RFC 3339 UTC text, or NULL when zero.
func jobStamp(t time.Time) any {
	if t.IsZero() {
		return nil
	}
	return t.UTC().Format(time.RFC3339)
}

// jobTime reads a time stored by jobStamp; NULL is the zero time.
func jobTime(s sql.NullString) (time.Time, error) {
	if !s.Valid {
		return time.Time{}, nil
	}
	return time.Parse(time.RFC3339, s.String)
}

// jobText stores a JSON document as text, or NULL when there is none.
func jobText(b []byte) any {
	if len(b) == 0 {
		return nil
	}
	return string(b)
}

// jobID stores an optional id: 0 is NULL.
func jobID(id int64) any {
	if id == 0 {
		return nil
	}
	return id
}

func scanJob(sc interface{ Scan(...any) error }) (jobs.Job, error) {
	var j jobs.Job
	var dataset, rerun sql.NullInt64
	var params, result, started, finished sql.NullString
	var status, created string
	if err := sc.Scan(&j.ID, &j.Kind, &dataset, &params, &status, &j.Progress, &j.Message, &j.Error, &result,
		&j.CreatedBy, &created, &started, &finished, &rerun); err != nil {
		return j, err
	}
	j.DatasetID, j.RerunOf, j.Status = dataset.Int64, rerun.Int64, jobs.Status(status)
	if params.Valid {
		j.Params = []byte(params.String)
	}
	if result.Valid {
		j.Result = []byte(result.String)
	}
	var err error
	if j.CreatedAt, err = time.Parse(time.RFC3339, created); err != nil {
		return j, fmt.Errorf("job %d: stored created_at: %w", j.ID, err)
	}
	if j.StartedAt, err = jobTime(started); err != nil {
		return j, fmt.Errorf("job %d: stored started_at: %w", j.ID, err)
	}
	if j.FinishedAt, err = jobTime(finished); err != nil {
		return j, fmt.Errorf("job %d: stored finished_at: %w", j.ID, err)
	}
	return j, nil
}

// InsertJob stores a new job and returns its id; j.ID is ignored.
func (s *Store) InsertJob(ctx context.Context, j jobs.Job) (int64, error) {
	res, err := s.w.ExecContext(ctx, `INSERT INTO jobs (kind, dataset_id, params, status, progress, message, error,
		result, created_by, created_at, started_at, finished_at, rerun_of)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
		j.Kind, jobID(j.DatasetID), jobText(j.Params), string(j.Status), j.Progress, j.Message, j.Error,
		jobText(j.Result), j.CreatedBy, j.CreatedAt.UTC().Format(time.RFC3339), jobStamp(j.StartedAt),
		jobStamp(j.FinishedAt), jobID(j.RerunOf))
	if err != nil {
		return 0, fmt.Errorf("insert %s job: %w", j.Kind, err)
	}
	id, err := res.LastInsertId()
	if err != nil {
		return 0, fmt.Errorf("insert %s job: %w", j.Kind, err)
	}
	return id, nil
}

// UpdateJob writes a job's status, progress, message, error, result and
// start and finish times. A missing job is a problem.NotFound.
func (s *Store) UpdateJob(ctx context.Context, j jobs.Job) error {
	res, err := s.w.ExecContext(ctx, `UPDATE jobs SET status = ?, progress = ?, message = ?, error = ?, result = ?,
		started_at = ?, finished_at = ? WHERE id = ?`,
		string(j.Status), j.Progress, j.Message, j.Error, jobText(j.Result),
		jobStamp(j.StartedAt), jobStamp(j.FinishedAt), j.ID)
	if err != nil {
		return fmt.Errorf("update job %d: %w", j.ID, err)
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return problem.New(problem.NotFound, "there is no job %d", j.ID)
	}
	return nil
}

// JobByID returns the job with the given id. A missing job is a
// problem.NotFound.
func (s *Store) JobByID(ctx context.Context, id int64) (jobs.Job, error) {
	j, err := scanJob(s.r.QueryRowContext(ctx, `SELECT `+jobColumns+` FROM jobs WHERE id = ?`, id))
	if errors.Is(err, sql.ErrNoRows) {
		return jobs.Job{}, problem.New(problem.NotFound, "there is no job %d", id)
	}
	if err != nil {
		return jobs.Job{}, fmt.Errorf("job %d: %w", id, err)
	}
	return j, nil
}

// ListJobs returns the jobs f selects, newest first: those of one dataset
// when f.DatasetID is set, at most f.Limit when it is positive.
func (s *Store) ListJobs(ctx context.Context, f jobs.Filter) ([]jobs.Job, error) {
	q := `SELECT ` + jobColumns + ` FROM jobs`
	var args []any
	if f.DatasetID != 0 {
		q += ` WHERE dataset_id = ?`
		args = append(args, f.DatasetID)
	}
	q += ` ORDER BY id DESC`
	if f.Limit > 0 {
		q += ` LIMIT ?`
		args = append(args, f.Limit)
	}
	op := "list jobs"
	if f.DatasetID != 0 {
		op = fmt.Sprintf("list jobs of dataset %d", f.DatasetID)
	}
	rows, err := s.r.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", op, err)
	}
	defer rows.Close()
	var out []jobs.Job
	for rows.Next() {
		j, err := scanJob(rows)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", op, err)
		}
		out = append(out, j)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("%s: %w", op, err)
	}
	return out, nil
}

// InterruptJobs marks every queued or running job interrupted, finished at
// at, and returns how many it marked. It runs at start-up, for jobs the
// last process left unfinished.
func (s *Store) InterruptJobs(ctx context.Context, at time.Time) (int, error) {
	res, err := s.w.ExecContext(ctx, `UPDATE jobs SET status = 'interrupted', finished_at = ?
		WHERE status IN ('queued', 'running')`, jobStamp(at))
	if err != nil {
		return 0, fmt.Errorf("interrupt unfinished jobs: %w", err)
	}
	n, err := res.RowsAffected()
	if err != nil {
		return 0, fmt.Errorf("interrupt unfinished jobs: %w", err)
	}
	return int(n), nil
}
