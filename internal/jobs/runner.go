package jobs

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"log/slog"
	"runtime/debug"
	"slices"
	"sync"
	"time"

	"ebb/internal/problem"
)

// ErrNotRunning is returned by Submit before Start and after Stop, and by
// Wait for a job that is unfinished but not queued or running in this
// Runner (left queued by Stop, or run by another process).
var ErrNotRunning = errors.New("the job runner is not running")

// Causes of a running job's cancellation. Both wrap context.Canceled, so a
// Func that returns context.Cause(ctx) is treated like one returning
// ctx.Err().
var (
	errCancelled = fmt.Errorf("job cancelled: %w", context.Canceled)
	errStopping  = fmt.Errorf("job runner stopping: %w", context.Canceled)
)

// Options configure a Runner.
type Options struct {
	// Workers is how many jobs run at once (default 1).
	Workers int
	// Now returns the current time. It is required: pass time.Now.
	Now func() time.Time
	// PersistEvery is how often a running job's progress is written to
	// storage (default 2 s). Status changes are written at once.
	PersistEvery time.Duration
	// Log receives internal errors of jobs and of storage (default
	// slog.Default()).
	Log *slog.Logger
}

// Runner queues jobs and runs them on a fixed pool of workers. Its methods
// are safe for concurrent use. A Runner is started once and stopped once.
type Runner struct {
	st  Storage
	opt Options
	log *slog.Logger

	mu      sync.Mutex
	cond    *sync.Cond // signals workers: a job was queued, or the runner stops
	funcs   map[string]Func
	queue   []*entry         // queued jobs, oldest first
	tracked map[int64]*entry // queued and running jobs, until their final state is stored
	started bool
	stopped bool
	bg      context.Context // for storage writes that must outlive a cancelled job or request
	base    context.Context // parent of every running job's context
	cancel  context.CancelCauseFunc
	wg      sync.WaitGroup

	// ticks returns the ticks on which a running job's progress is
	// written, and a function that stops them; tests replace it.
	ticks func(every time.Duration) (<-chan time.Time, func())
}

// entry is a job this Runner has queued or is running.
type entry struct {
	job      Job // current state; guarded by Runner.mu
	fn       Func
	progress Progress
	cancel   context.CancelCauseFunc // set when the job starts

	done  chan struct{} // closed once final and err are set
	final Job
	err   error // a failure to store the final state, or ErrNotRunning
}

// New returns a Runner that keeps its jobs in st. It panics when opt.Now is
// nil, a programmer error.
func New(st Storage, opt Options) *Runner {
	if opt.Now == nil {
		panic("jobs.New: Options.Now is nil; pass time.Now")
	}
	if opt.Workers <= 0 {
		opt.Workers = 1
	}
	if opt.PersistEvery <= 0 {
		opt.PersistEvery = 2 * time.Second
	}
	log := opt.Log
	if log == nil {
		log = slog.Default()
	}
	r := &Runner{st: st, opt: opt, log: log, funcs: map[string]Func{}, tracked: map[int64]*entry{}, ticks: clockTicks}
	r.cond = sync.NewCond(&r.mu)
	return r
}

// Register makes fn run jobs of the given kind. It panics when the kind is
// registered already, a programmer error.
func (r *Runner) Register(kind string, fn Func) {
	if kind == "" || fn == nil {
		panic("jobs: Register needs a kind and a Func")
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	if _, ok := r.funcs[kind]; ok {
		panic(fmt.Sprintf("jobs: kind %q registered twice", kind))
	}
	r.funcs[kind] = fn
}

// now is the Runner's clock at the precision storage keeps (seconds, UTC),
// so a job read from memory equals the same job read from storage.
func (r *Runner) now() time.Time { return r.opt.Now().UTC().Truncate(time.Second) }

// Start marks every job left queued or running in storage (by a stopped or
// crashed process) interrupted, returning how many, and starts the
// workers. Cancelling ctx later stops the Runner as Stop does, except that
// it does not wait for running jobs to end.
//
// Start interrupts every unfinished job in storage: at most one Runner may
// use a database at a time.
func (r *Runner) Start(ctx context.Context) (interrupted int, err error) {
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.started || r.stopped {
		return 0, errors.New("start job runner: a runner starts once, and this one was started or stopped before")
	}
	n, err := r.st.InterruptJobs(ctx, r.now())
	if err != nil {
		return 0, fmt.Errorf("start job runner: interrupt leftover jobs: %w", err)
	}
	r.started = true
	r.bg = context.WithoutCancel(ctx)
	r.base, r.cancel = context.WithCancelCause(ctx)
	context.AfterFunc(r.base, r.shutdown)
	for range r.opt.Workers {
		r.wg.Go(r.work)
	}
	return n, nil
}

// Stop cancels running jobs, which end interrupted, and waits for them and
// the workers to end. Jobs still queued stay queued in storage (the next
// Start marks them interrupted), and Wait returns ErrNotRunning for them.
func (r *Runner) Stop() {
	r.mu.Lock()
	cancel := r.cancel
	r.mu.Unlock()
	if cancel != nil {
		cancel(errStopping)
	}
	r.shutdown()
	r.wg.Wait()
}

// shutdown stops workers taking jobs and releases the waiters of queued
// jobs. It runs once the base context is cancelled, and from Stop (which
// may be called before Start).
func (r *Runner) shutdown() {
	r.mu.Lock()
	if r.stopped {
		r.mu.Unlock()
		return
	}
	r.stopped = true
	queued := r.queue
	r.queue = nil
	for _, e := range queued {
		delete(r.tracked, e.job.ID)
	}
	r.cond.Broadcast()
	r.mu.Unlock()
	for _, e := range queued {
		e.final, e.err = e.job, fmt.Errorf("job %d stays queued: %w", e.job.ID, ErrNotRunning)
		close(e.done)
	}
}

// live reports whether the Runner takes jobs: started, and neither stopped
// nor with its context ended (shutdown runs just after that). r.mu must be
// held.
func (r *Runner) live() bool {
	return r.started && !r.stopped && r.base.Err() == nil
}

// Submit queues a job of the given kind and returns its id. An unknown kind
// is a problem.Invalid.
func (r *Runner) Submit(ctx context.Context, kind string, datasetID int64, params []byte, by string) (int64, error) {
	return r.submit(ctx, Job{Kind: kind, DatasetID: datasetID, Params: params, CreatedBy: by})
}

func (r *Runner) submit(ctx context.Context, j Job) (int64, error) {
	r.mu.Lock()
	fn, ok := r.funcs[j.Kind]
	running := r.live()
	r.mu.Unlock()
	if !ok {
		return 0, problem.New(problem.Invalid, "there is no kind of job called %q", j.Kind)
	}
	if !running {
		return 0, fmt.Errorf("submit %s job: %w", j.Kind, ErrNotRunning)
	}
	j.Params = slices.Clone(j.Params)
	j.Status = Queued
	j.CreatedAt = r.now()
	id, err := r.st.InsertJob(ctx, j)
	if err != nil {
		return 0, fmt.Errorf("submit %s job: %w", j.Kind, err)
	}
	j.ID = id
	r.mu.Lock()
	defer r.mu.Unlock()
	if !r.live() {
		// Stopped while the job was being stored: it stays queued in
		// storage and the next Start marks it interrupted.
		return id, fmt.Errorf("submit %s job %d: %w", j.Kind, id, ErrNotRunning)
	}
	e := &entry{job: j, fn: fn, done: make(chan struct{})}
	r.tracked[id] = e
	r.queue = append(r.queue, e)
	r.cond.Signal()
	return id, nil
}

// Get returns the job with the given id as stored, with the live state of
// a queued or running job overlaid. A missing job is a problem.NotFound.
func (r *Runner) Get(ctx context.Context, id int64) (Job, error) {
	j, err := r.st.JobByID(ctx, id)
	if err != nil {
		return Job{}, err
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.overlay(j), nil
}

// List returns the jobs f selects, newest first, with the live state of
// queued and running jobs overlaid.
func (r *Runner) List(ctx context.Context, f Filter) ([]Job, error) {
	js, err := r.st.ListJobs(ctx, f)
	if err != nil {
		return nil, err
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	for i := range js {
		js[i] = r.overlay(js[i])
	}
	return js, nil
}

// overlay returns j with the in-memory state of the same job, when this
// Runner has it. The memory state is never older than the stored one: it
// changes first and is written after. r.mu must be held.
func (r *Runner) overlay(j Job) Job {
	e, ok := r.tracked[j.ID]
	if !ok {
		return j
	}
	cur := e.current()
	j.Status, j.Progress, j.Message, j.Error = cur.Status, cur.Progress, cur.Message, cur.Error
	j.Result, j.StartedAt, j.FinishedAt = cur.Result, cur.StartedAt, cur.FinishedAt
	return j
}

// current is the entry's job with live progress. The Runner's mu must be
// held.
func (e *entry) current() Job {
	j := e.job
	if j.Status == Running {
		j.Progress, j.Message = e.progress.Get()
	}
	return j
}

// Cancel cancels a job. A queued job is cancelled at once; a running job's
// context is cancelled, and it ends cancelled when its Func returns (or
// done, if it finished meanwhile). Cancelling a finished job, or one this
// Runner does not run, is a problem.Conflict.
func (r *Runner) Cancel(ctx context.Context, id int64) error {
	r.mu.Lock()
	e, ok := r.tracked[id]
	if !ok {
		r.mu.Unlock()
		j, err := r.st.JobByID(ctx, id)
		if err != nil {
			return err
		}
		if j.Status.Finished() {
			return problem.New(problem.Conflict, "job %d is already %s", id, j.Status)
		}
		return problem.New(problem.Conflict, "job %d is %s, but not in this ebb process, so it cannot be cancelled here", id, j.Status)
	}
	switch e.job.Status {
	case Running:
		e.cancel(errCancelled)
		r.mu.Unlock()
		return nil
	case Queued:
		r.queue = slices.DeleteFunc(r.queue, func(q *entry) bool { return q == e })
		e.job.Status = Cancelled
		e.job.FinishedAt = r.now()
		j := e.job
		r.mu.Unlock()
		return r.finish(context.WithoutCancel(ctx), e, j)
	default:
		st := e.job.Status
		r.mu.Unlock()
		return problem.New(problem.Conflict, "job %d is already %s", id, st)
	}
}

// Rerun submits a new job with the kind, dataset and parameters of a
// failed, cancelled or interrupted one, and returns its id; any other
// status is a problem.Conflict.
func (r *Runner) Rerun(ctx context.Context, id int64, by string) (int64, error) {
	j, err := r.Get(ctx, id)
	if err != nil {
		return 0, err
	}
	switch j.Status {
	case Failed, Cancelled, Interrupted:
	default:
		return 0, problem.New(problem.Conflict, "job %d is %s; only a failed, cancelled or interrupted job can be re-run", id, j.Status)
	}
	return r.submit(ctx, Job{Kind: j.Kind, DatasetID: j.DatasetID, Params: j.Params, CreatedBy: by, RerunOf: id})
}

// Wait blocks until the job has finished and returns it, or until ctx is
// done. A job finished before (even by another process) is read from
// storage. An unfinished job this Runner does not run, and a queued job
// when the Runner stops, return the job and ErrNotRunning.
func (r *Runner) Wait(ctx context.Context, id int64) (Job, error) {
	r.mu.Lock()
	e, ok := r.tracked[id]
	r.mu.Unlock()
	if ok {
		select {
		case <-e.done:
			return e.final, e.err
		case <-ctx.Done():
			return Job{}, fmt.Errorf("wait for job %d: %w", id, ctx.Err())
		}
	}
	// Not tracked: either finished and stored, or not ours. A tracked job
	// leaves r.tracked only after its final state is stored.
	j, err := r.st.JobByID(ctx, id)
	if err != nil {
		return Job{}, err
	}
	if !j.Status.Finished() {
		return j, fmt.Errorf("wait for job %d: it is %s but not queued or running here: %w", id, j.Status, ErrNotRunning)
	}
	return j, nil
}

// work is one worker: it runs queued jobs, oldest first, until the Runner
// stops.
func (r *Runner) work() {
	for {
		e, j, ctx := r.next()
		if e == nil {
			return
		}
		r.run(ctx, e, j)
	}
}

// next waits for a queued job, marks it running in memory and returns it
// with its context, or nil when the Runner stops.
func (r *Runner) next() (*entry, Job, context.Context) {
	r.mu.Lock()
	defer r.mu.Unlock()
	for len(r.queue) == 0 && !r.stopped {
		r.cond.Wait()
	}
	if !r.live() {
		return nil, Job{}, nil
	}
	e := r.queue[0]
	r.queue[0] = nil
	r.queue = r.queue[1:]
	ctx, cancel := context.WithCancelCause(r.base)
	e.cancel = cancel
	e.job.Status = Running
	e.job.StartedAt = r.now()
	return e, e.job, ctx
}

// outcome is what a job's Func returned.
type outcome struct {
	result []byte
	err    error
}

// run runs one job to its final state and stores it.
func (r *Runner) run(ctx context.Context, e *entry, j Job) {
	defer e.cancel(nil)
	var out outcome
	if err := r.st.UpdateJob(r.bg, j); err != nil {
		out.err = fmt.Errorf("record job %d as running: %w", j.ID, err)
	} else if ctx.Err() != nil {
		out.err = context.Cause(ctx) // cancelled before it began
	} else {
		out = r.call(ctx, e, j)
	}
	r.mu.Lock()
	fin := e.current()
	r.mu.Unlock()
	fin.FinishedAt = r.now()
	fin.Result = out.result
	cancelled := ctx.Err() != nil && (errors.Is(out.err, context.Canceled) || errors.Is(out.err, context.DeadlineExceeded))
	switch p := problem.As(out.err); {
	case out.err == nil:
		fin.Status, fin.Progress = Done, 100
	case cancelled && errors.Is(context.Cause(ctx), errCancelled):
		fin.Status = Cancelled
	case cancelled:
		fin.Status = Interrupted // Stop, or the context given to Start ended
	case p != nil:
		fin.Status, fin.Error = Failed, p.Message
	default:
		ref := newRef()
		fin.Status, fin.Error = Failed, "Something went wrong (ref "+ref+")"
		r.log.Error("job failed", "ref", ref, "job", j.ID, "kind", j.Kind, "err", out.err)
	}
	r.mu.Lock()
	e.job = fin
	r.mu.Unlock()
	r.finish(r.bg, e, fin)
}

// call runs the job's Func in its own goroutine, recovering a panic, and
// writes the job's progress every PersistEvery while it runs.
func (r *Runner) call(ctx context.Context, e *entry, j Job) outcome {
	res := make(chan outcome, 1)
	go func() {
		defer func() {
			if v := recover(); v != nil {
				res <- outcome{err: fmt.Errorf("job %d (%s) panicked: %v\n%s", j.ID, j.Kind, v, debug.Stack())}
			}
		}()
		result, err := e.fn(ctx, j, &e.progress)
		res <- outcome{result: result, err: err}
	}()
	ticks, stop := r.ticks(r.opt.PersistEvery)
	defer stop()
	var written uint64
	for {
		select {
		case out := <-res:
			return out
		case <-ticks:
			pct, msg, seq := e.progress.snapshot()
			if seq == written {
				continue
			}
			r.mu.Lock()
			e.job.Progress, e.job.Message = pct, msg
			cur := e.job
			r.mu.Unlock()
			if err := r.st.UpdateJob(r.bg, cur); err != nil {
				r.log.Warn("record job progress", "job", j.ID, "kind", j.Kind, "err", err)
				continue
			}
			written = seq
		}
	}
}

func clockTicks(every time.Duration) (<-chan time.Time, func()) {
	t := time.NewTicker(every)
	return t.C, t.Stop
}

// finish stores a job's final state, forgets the job and releases its
// waiters.
func (r *Runner) finish(ctx context.Context, e *entry, fin Job) error {
	err := r.st.UpdateJob(ctx, fin)
	if err != nil {
		err = fmt.Errorf("record job %d as %s: %w", fin.ID, fin.Status, err)
		r.log.Error("record job state", "job", fin.ID, "kind", fin.Kind, "status", fin.Status, "err", err)
	}
	r.mu.Lock()
	delete(r.tracked, fin.ID)
	r.mu.Unlock()
	e.final, e.err = fin, err
	close(e.done)
	return err
}

// newRef returns a random reference of six hex digits that ties a message
// shown to a user to the log line with the whole error.
func newRef() string {
	b := make([]byte, 3)
	rand.Read(b) // never returns an error (crypto/rand, Go 1.24+)
	return hex.EncodeToString(b)
}
