package jobs_test

import (
	"bytes"
	"context"
	"log/slog"
	"slices"
	"sync"
	"testing"
	"time"

	"ebb/internal/jobs"
	"ebb/internal/problem"
)

// guard bounds every wait in these tests. It is a failure guard, never a
// measurement: a healthy run takes milliseconds.
const guard = 10 * time.Second

var t0 = time.Date(2026, 12, 1, 12, 0, 0, 0, time.UTC)

func fixedClock() time.Time { return t0 }

// steppingClock returns t0+1s, t0+2s, … on successive calls.
func steppingClock() func() time.Time {
	var mu sync.Mutex
	n := 0
	return func() time.Time {
		mu.Lock()
		defer mu.Unlock()
		n++
		return t0.Add(time.Duration(n) * time.Second)
	}
}

// memStorage is an in-memory jobs.Storage that records every write and
// signals each one, so tests can wait for a write without sleeping.
type memStorage struct {
	mu      sync.Mutex
	jobs    map[int64]jobs.Job
	last    int64
	updates []jobs.Job    // every UpdateJob, in order
	wrote   chan struct{} // gets a value (if it has room) after each write
}

func newMemStorage() *memStorage {
	return &memStorage{jobs: map[int64]jobs.Job{}, wrote: make(chan struct{}, 1)}
}

func clone(j jobs.Job) jobs.Job {
	j.Params, j.Result = bytes.Clone(j.Params), bytes.Clone(j.Result)
	return j
}

func (m *memStorage) signal() {
	select {
	case m.wrote <- struct{}{}:
	default:
	}
}

func (m *memStorage) InsertJob(_ context.Context, j jobs.Job) (int64, error) {
	m.mu.Lock()
	defer m.mu.Unlock()
	m.last++
	j.ID = m.last
	m.jobs[j.ID] = clone(j)
	m.signal()
	return j.ID, nil
}

func (m *memStorage) UpdateJob(_ context.Context, j jobs.Job) error {
	m.mu.Lock()
	defer m.mu.Unlock()
	old, ok := m.jobs[j.ID]
	if !ok {
		return problem.New(problem.NotFound, "there is no job %d", j.ID)
	}
	old.Status, old.Progress, old.Message, old.Error = j.Status, j.Progress, j.Message, j.Error
	old.Result, old.StartedAt, old.FinishedAt = j.Result, j.StartedAt, j.FinishedAt
	m.jobs[j.ID] = clone(old)
	m.updates = append(m.updates, clone(old))
	m.signal()
	return nil
}

func (m *memStorage) JobByID(_ context.Context, id int64) (jobs.Job, error) {
	m.mu.Lock()
	defer m.mu.Unlock()
	j, ok := m.jobs[id]
	if !ok {
		return jobs.Job{}, problem.New(problem.NotFound, "there is no job %d", id)
	}
	return clone(j), nil
}

func (m *memStorage) ListJobs(_ context.Context, f jobs.Filter) ([]jobs.Job, error) {
	m.mu.Lock()
	defer m.mu.Unlock()
	var out []jobs.Job
	for _, j := range m.jobs {
		if f.DatasetID == 0 || j.DatasetID == f.DatasetID {
			out = append(out, clone(j))
		}
	}
	slices.SortFunc(out, func(a, b jobs.Job) int { return int(b.ID - a.ID) })
	if f.Limit > 0 && len(out) > f.Limit {
		out = out[:f.Limit]
	}
	return out, nil
}

func (m *memStorage) InterruptJobs(_ context.Context, at time.Time) (int, error) {
	m.mu.Lock()
	defer m.mu.Unlock()
	n := 0
	for id, j := range m.jobs {
		if j.Status == jobs.Queued || j.Status == jobs.Running {
			j.Status, j.FinishedAt = jobs.Interrupted, at
			m.jobs[id] = j
			n++
		}
	}
	m.signal()
	return n, nil
}

// stored returns the job as storage has it, failing the test when missing.
func (m *memStorage) stored(t *testing.T, id int64) jobs.Job {
	t.Helper()
	j, err := m.JobByID(context.Background(), id)
	if err != nil {
		t.Fatal(err)
	}
	return j
}

// waitStored waits until the stored job satisfies ok, and returns it.
func (m *memStorage) waitStored(t *testing.T, id int64, what string, ok func(jobs.Job) bool) jobs.Job {
	t.Helper()
	deadline := time.After(guard)
	for {
		if j := m.stored(t, id); ok(j) {
			return j
		}
		select {
		case <-m.wrote:
		case <-deadline:
			t.Fatalf("job %d: storage never saw %s; last stored: %+v", id, what, m.stored(t, id))
		}
	}
}

// syncBuffer is a log destination safe for the runner's goroutines.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// startRunner builds a runner on st with fn registered under each of
// kinds, starts it, and stops it when the test ends. Zero options get the
// fixed clock and a log kept in the returned buffer.
func startRunner(t *testing.T, st jobs.Storage, opt jobs.Options, kinds map[string]jobs.Func) (*jobs.Runner, *syncBuffer) {
	t.Helper()
	logs := &syncBuffer{}
	if opt.Now == nil {
		opt.Now = fixedClock
	}
	if opt.Log == nil {
		opt.Log = slog.New(slog.NewTextHandler(logs, nil))
	}
	r := jobs.New(st, opt)
	for kind, fn := range kinds {
		r.Register(kind, fn)
	}
	if _, err := r.Start(context.Background()); err != nil {
		t.Fatalf("Start: %v", err)
	}
	t.Cleanup(r.Stop)
	return r, logs
}

// gate is a job function the test controls: it sets its progress to 40
// "reading", reports its job id on started, then waits for release (and
// returns {"ok":true}) or for cancellation (and returns ctx.Err()).
type gate struct {
	started chan int64
	release chan struct{}
}

func newGate() *gate {
	return &gate{started: make(chan int64, 16), release: make(chan struct{})}
}

func (g *gate) run(ctx context.Context, j jobs.Job, p *jobs.Progress) ([]byte, error) {
	p.Set(40, "reading")
	g.started <- j.ID
	select {
	case <-g.release:
		return []byte(`{"ok":true}`), nil
	case <-ctx.Done():
		return nil, ctx.Err()
	}
}

// waitStarted returns the id of the next job that started through g.
func (g *gate) waitStarted(t *testing.T) int64 {
	t.Helper()
	select {
	case id := <-g.started:
		return id
	case <-time.After(guard):
		t.Fatal("no gated job started")
		return 0
	}
}

func mustSubmit(t *testing.T, r *jobs.Runner, kind string, datasetID int64, params string) int64 {
	t.Helper()
	id, err := r.Submit(context.Background(), kind, datasetID, []byte(params), "ann")
	if err != nil {
		t.Fatalf("Submit(%s): %v", kind, err)
	}
	return id
}

func mustWait(t *testing.T, r *jobs.Runner, id int64) jobs.Job {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), guard)
	defer cancel()
	j, err := r.Wait(ctx, id)
	if err != nil {
		t.Fatalf("Wait(%d): %v", id, err)
	}
	return j
}

func mustGet(t *testing.T, r *jobs.Runner, id int64) jobs.Job {
	t.Helper()
	j, err := r.Get(context.Background(), id)
	if err != nil {
		t.Fatalf("Get(%d): %v", id, err)
	}
	return j
}

func discard() *slog.Logger { return slog.New(slog.DiscardHandler) }

// succeed is a job function that returns {"n":1} at once.
func succeed(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) {
	return []byte(`{"n":1}`), nil
}
