package jobs

import (
	"context"
	"time"
)

// Status is where a job is in its life: queued, then running, then one of
// the finished statuses.
type Status string

const (
	Queued      Status = "queued"
	Running     Status = "running"
	Done        Status = "done"
	Failed      Status = "failed"
	Cancelled   Status = "cancelled"
	Interrupted Status = "interrupted" // the process stopped while the job was queued or running
)

// Finished reports whether the job has ended: done, failed, cancelled or
// interrupted.
func (s Status) Finished() bool {
	switch s {
	case Done, Failed, Cancelled, Interrupted:
		return true
	}
	return false
}

// Job is one run of a long computation.
type Job struct {
	ID        int64
	Kind      string // names the Func that runs it, e.g. "import"
	DatasetID int64  // 0 when the job concerns no dataset
	Params    []byte // JSON chosen by the kind
	Status    Status
	Progress  float64 // percent, 0 to 100
	Message   string  // short note on what is happening now
	Error     string  // user-safe one-line message when Failed
	// Result is the small JSON document the kind's Func returned: on
	// success, and on failure when it returned one (a problem report's
	// location, say).
	Result     []byte
	CreatedBy  string
	CreatedAt  time.Time // second precision, UTC
	StartedAt  time.Time // zero until the job starts
	FinishedAt time.Time // zero until the job finishes
	RerunOf    int64     // the job this one re-runs, 0 if none
}

// Filter selects jobs to list. Zero fields select everything.
type Filter struct {
	DatasetID int64 // only jobs of this dataset
	Limit     int   // at most this many, newest first
}

// Storage persists jobs; internal/store implements it in SQLite.
type Storage interface {
	// InsertJob stores a new job and returns its id; j.ID is ignored.
	InsertJob(ctx context.Context, j Job) (int64, error)
	// UpdateJob writes a job's status, progress, message, error, result
	// and start and finish times.
	UpdateJob(ctx context.Context, j Job) error
	// JobByID returns a problem.NotFound error when there is no such job.
	JobByID(ctx context.Context, id int64) (Job, error)
	// ListJobs returns the jobs the filter selects, newest first.
	ListJobs(ctx context.Context, f Filter) ([]Job, error)
	// InterruptJobs marks every queued or running job interrupted, finished
	// at the given time, and returns how many it marked.
	InterruptJobs(ctx context.Context, at time.Time) (int, error)
}

// Func does one job and returns a small JSON result. It reports progress
// through p and must return promptly once ctx is cancelled, with an error
// that wraps ctx's error (ctx.Err() will do).
type Func func(ctx context.Context, j Job, p *Progress) (result []byte, err error)
