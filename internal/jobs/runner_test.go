package jobs_test

import (
	"context"
	"errors"
	"fmt"
	"io"
	"reflect"
	"regexp"
	"slices"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"ebb/internal/jobs"
	"ebb/internal/problem"
)

func TestSubmitRunsToDone(t *testing.T) {
	st := newMemStorage()
	var seen jobs.Job
	fn := func(ctx context.Context, j jobs.Job, p *jobs.Progress) ([]byte, error) {
		seen = j
		p.Set(50, "halfway")
		return []byte(`{"orders":3}`), nil
	}
	// Calls of the stepping clock: Start t0+1s, Submit t0+2s, the job
	// starts t0+3s and finishes t0+4s.
	r, _ := startRunner(t, st, jobs.Options{Now: steppingClock()}, map[string]jobs.Func{"import": fn})
	id := mustSubmit(t, r, "import", 7, `{"file":"orders.csv"}`)
	got := mustWait(t, r, id)

	want := jobs.Job{
		ID: id, Kind: "import", DatasetID: 7, Params: []byte(`{"file":"orders.csv"}`),
		Status: jobs.Done, Progress: 100, Message: "halfway", Result: []byte(`{"orders":3}`), CreatedBy: "ann",
		CreatedAt: t0.Add(2 * time.Second), StartedAt: t0.Add(3 * time.Second), FinishedAt: t0.Add(4 * time.Second),
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("Wait =\n%+v\nwant\n%+v", got, want)
	}
	if stored := st.stored(t, id); !reflect.DeepEqual(stored, want) {
		t.Errorf("stored =\n%+v\nwant\n%+v", stored, want)
	}
	if g := mustGet(t, r, id); !reflect.DeepEqual(g, want) {
		t.Errorf("Get after done =\n%+v\nwant\n%+v", g, want)
	}
	// The function saw the job as it started.
	if seen.ID != id || seen.Status != jobs.Running || string(seen.Params) != `{"file":"orders.csv"}` || !seen.StartedAt.Equal(want.StartedAt) {
		t.Errorf("function saw %+v; want job %d running since %v with its params", seen, id, want.StartedAt)
	}
}

func TestGetShowsLiveProgress(t *testing.T) {
	st := newMemStorage()
	g := newGate()
	// Progress is written only every hour here, so what Get shows while
	// the job runs can only come from memory.
	r, _ := startRunner(t, st, jobs.Options{PersistEvery: time.Hour}, map[string]jobs.Func{"import": g.run, "ok": succeed})
	other := mustSubmit(t, r, "ok", 2, `{}`)
	mustWait(t, r, other)

	id := mustSubmit(t, r, "import", 1, `{}`)
	g.waitStarted(t)

	got := mustGet(t, r, id)
	if got.Status != jobs.Running || got.Progress != 40 || got.Message != "reading" || !got.StartedAt.Equal(t0) {
		t.Errorf("Get while running = %s %v%% %q started %v; want running 40%% \"reading\" started %v",
			got.Status, got.Progress, got.Message, got.StartedAt, t0)
	}
	list, err := r.List(context.Background(), jobs.Filter{DatasetID: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(list) != 1 || list[0].ID != id || list[0].Progress != 40 || list[0].Message != "reading" {
		t.Errorf("List(dataset 1) = %+v; want job %d at 40%% \"reading\"", list, id)
	}
	if stored := st.stored(t, id); stored.Status != jobs.Running || stored.Progress != 0 || stored.Message != "" {
		t.Errorf("stored while running = %s %v%% %q; want running 0%% \"\" (progress not yet written)",
			stored.Status, stored.Progress, stored.Message)
	}
	all, err := r.List(context.Background(), jobs.Filter{})
	if err != nil {
		t.Fatal(err)
	}
	if ids := []int64{all[0].ID, all[1].ID}; len(all) != 2 || !slices.Equal(ids, []int64{id, other}) || all[1].Status != jobs.Done {
		t.Errorf("List() = %+v; want jobs %d (running) and %d (done), newest first", all, id, other)
	}

	close(g.release)
	if got := mustWait(t, r, id); got.Status != jobs.Done || got.Progress != 100 {
		t.Errorf("Wait = %s %v%%, want done 100%%", got.Status, got.Progress)
	}
}

func TestProgressWrittenEveryInterval(t *testing.T) {
	st := newMemStorage()
	next, release := make(chan struct{}), make(chan struct{})
	fn := func(ctx context.Context, j jobs.Job, p *jobs.Progress) ([]byte, error) {
		p.Set(30, "step one")
		select {
		case <-next:
		case <-ctx.Done():
			return nil, ctx.Err()
		}
		p.Set(70, "step two")
		select {
		case <-release:
			return nil, nil
		case <-ctx.Done():
			return nil, ctx.Err()
		}
	}
	r, _ := startRunner(t, st, jobs.Options{PersistEvery: 20 * time.Millisecond}, map[string]jobs.Func{"train": fn})
	id := mustSubmit(t, r, "train", 0, ``)
	st.waitStored(t, id, "30% step one", func(j jobs.Job) bool {
		return j.Status == jobs.Running && j.Progress == 30 && j.Message == "step one"
	})
	close(next)
	st.waitStored(t, id, "70% step two", func(j jobs.Job) bool {
		return j.Status == jobs.Running && j.Progress == 70 && j.Message == "step two"
	})
	close(release)
	if got := mustWait(t, r, id); got.Status != jobs.Done {
		t.Fatalf("Wait = %s, want done", got.Status)
	}

	// Unchanged progress is not written again: the updates are running
	// (start), 30, 70, done, whatever the number of ticks.
	st.mu.Lock()
	var seq []string
	for _, u := range st.updates {
		seq = append(seq, fmt.Sprintf("%s %v", u.Status, u.Progress))
	}
	st.mu.Unlock()
	want := []string{"running 0", "running 30", "running 70", "done 100"}
	if !slices.Equal(seq, want) {
		t.Errorf("writes = %q, want %q", seq, want)
	}
}

func TestCancel(t *testing.T) {
	ctx := context.Background()

	t.Run("queued job is cancelled at once", func(t *testing.T) {
		st := newMemStorage()
		g := newGate()
		var calls atomic.Int32
		count := func(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) { calls.Add(1); return nil, nil }
		r, _ := startRunner(t, st, jobs.Options{}, map[string]jobs.Func{"block": g.run, "count": count})
		first := mustSubmit(t, r, "block", 0, ``)
		g.waitStarted(t)
		queued := mustSubmit(t, r, "count", 0, ``)
		if err := r.Cancel(ctx, queued); err != nil {
			t.Fatalf("Cancel(queued): %v", err)
		}
		for name, got := range map[string]jobs.Job{"Get": mustGet(t, r, queued), "stored": st.stored(t, queued)} {
			if got.Status != jobs.Cancelled || !got.FinishedAt.Equal(t0) || !got.StartedAt.IsZero() {
				t.Errorf("%s = %s started %v finished %v; want cancelled, never started, finished %v",
					name, got.Status, got.StartedAt, got.FinishedAt, t0)
			}
		}
		if got := mustWait(t, r, queued); got.Status != jobs.Cancelled {
			t.Errorf("Wait(queued) = %s, want cancelled", got.Status)
		}
		close(g.release)
		mustWait(t, r, first)
		// The runner went on with the next job, and never ran the cancelled one.
		after := mustSubmit(t, r, "count", 0, ``)
		mustWait(t, r, after)
		if n := calls.Load(); n != 1 {
			t.Errorf("count ran %d times, want 1 (only the job after the cancelled one)", n)
		}
	})

	t.Run("running job ends cancelled", func(t *testing.T) {
		st := newMemStorage()
		g := newGate()
		r, logs := startRunner(t, st, jobs.Options{}, map[string]jobs.Func{"block": g.run})
		id := mustSubmit(t, r, "block", 0, ``)
		g.waitStarted(t)
		if err := r.Cancel(ctx, id); err != nil {
			t.Fatalf("Cancel(running): %v", err)
		}
		got := mustWait(t, r, id)
		if got.Status != jobs.Cancelled || got.Error != "" || got.Progress != 40 || got.StartedAt.IsZero() || got.FinishedAt.IsZero() {
			t.Errorf("Wait = %+v; want cancelled at 40%%, no error, with start and finish times", got)
		}
		if st.stored(t, id).Status != jobs.Cancelled {
			t.Errorf("stored status = %s, want cancelled", st.stored(t, id).Status)
		}
		if strings.Contains(logs.String(), "job failed") {
			t.Errorf("a cancelled job was logged as failed:\n%s", logs)
		}
	})

	tests := []struct {
		name string
		id   func(t *testing.T, r *jobs.Runner, st *memStorage) int64
		kind problem.Kind
	}{
		{"finished job", func(t *testing.T, r *jobs.Runner, _ *memStorage) int64 {
			id := mustSubmit(t, r, "ok", 0, ``)
			mustWait(t, r, id)
			return id
		}, problem.Conflict},
		{"job of another process", func(t *testing.T, _ *jobs.Runner, st *memStorage) int64 {
			id, _ := st.InsertJob(ctx, jobs.Job{Kind: "ok", Status: jobs.Running, CreatedAt: t0})
			return id
		}, problem.Conflict},
		{"missing job", func(*testing.T, *jobs.Runner, *memStorage) int64 { return 99 }, problem.NotFound},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			st := newMemStorage()
			r, _ := startRunner(t, st, jobs.Options{}, map[string]jobs.Func{"ok": succeed})
			id := tt.id(t, r, st)
			err := r.Cancel(ctx, id)
			if !problem.Is(err, tt.kind) {
				t.Fatalf("Cancel(%d) = %v, want a problem of kind %v", id, err, tt.kind)
			}
			if tt.kind != problem.NotFound {
				if after := st.stored(t, id); after.Status == jobs.Cancelled {
					t.Errorf("job %d became cancelled", id)
				}
			}
		})
	}
}

func TestFailures(t *testing.T) {
	refRE := regexp.MustCompile(`^Something went wrong \(ref ([0-9a-f]{6})\)$`)
	tests := []struct {
		name       string
		fn         jobs.Func
		wantError  string // exact, or "internal" for a reference message
		wantResult string
		wantLog    []string // besides ref, job and kind, for internal errors
	}{
		{
			name: "problem",
			fn: func(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) {
				return []byte(`{"report":"r.csv"}`), problem.New(problem.Invalid, "orders.csv line 3, column order_date: %q is not a date", "3/14")
			},
			wantError:  `orders.csv line 3, column order_date: "3/14" is not a date`,
			wantResult: `{"report":"r.csv"}`,
		},
		{
			name: "wrapped problem with a cause",
			fn: func(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) {
				return nil, fmt.Errorf("import into dataset 3: %w", problem.Wrap(problem.Invalid, io.ErrUnexpectedEOF, "the file ends in the middle of a row"))
			},
			wantError: "the file ends in the middle of a row",
		},
		{
			name: "internal error",
			fn: func(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) {
				return nil, errors.New("write orders of dataset 3: disk I/O error")
			},
			wantError: "internal",
			wantLog:   []string{"write orders of dataset 3: disk I/O error"},
		},
		{
			name: "internal error with a result",
			fn: func(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) {
				return []byte(`{"partial":true}`), errors.New("score customers: model 4 is missing")
			},
			wantError:  "internal",
			wantResult: `{"partial":true}`,
			wantLog:    []string{"score customers: model 4 is missing"},
		},
		{
			name: "panic",
			fn: func(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) {
				var s []int
				_ = s[7]
				return nil, nil
			},
			wantError: "internal",
			wantLog:   []string{"panicked", "index out of range [7] with length 0", "runner_test.go"},
		},
		{
			// Only a Cancel or Stop makes a cancellation; a function that
			// returns context.Canceled on its own has failed.
			name: "context.Canceled without a cancel",
			fn: func(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) {
				return nil, fmt.Errorf("read history: %w", context.Canceled)
			},
			wantError: "internal",
			wantLog:   []string{"read history: context canceled"},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			st := newMemStorage()
			r, logs := startRunner(t, st, jobs.Options{}, map[string]jobs.Func{"work": tt.fn, "ok": succeed})
			id := mustSubmit(t, r, "work", 0, ``)
			got := mustWait(t, r, id)
			if got.Status != jobs.Failed {
				t.Fatalf("status = %s, want failed", got.Status)
			}
			if string(got.Result) != tt.wantResult {
				t.Errorf("Result = %q, want %q", got.Result, tt.wantResult)
			}
			if stored := st.stored(t, id); stored.Error != got.Error || string(stored.Result) != tt.wantResult {
				t.Errorf("stored error %q result %q; want %q, %q", stored.Error, stored.Result, got.Error, tt.wantResult)
			}
			log := logs.String()
			if tt.wantError == "internal" {
				m := refRE.FindStringSubmatch(got.Error)
				if m == nil {
					t.Fatalf("Error = %q, want %q", got.Error, refRE)
				}
				for _, s := range append([]string{"ref=" + m[1], fmt.Sprintf("job=%d", id), "kind=work"}, tt.wantLog...) {
					if !strings.Contains(log, s) {
						t.Errorf("log lacks %q:\n%s", s, log)
					}
				}
			} else {
				if got.Error != tt.wantError {
					t.Errorf("Error = %q, want %q", got.Error, tt.wantError)
				}
				if strings.Contains(log, "job failed") {
					t.Errorf("a problem was logged as an internal error:\n%s", log)
				}
			}
			// The worker survives and runs the next job.
			if next := mustWait(t, r, mustSubmit(t, r, "ok", 0, ``)); next.Status != jobs.Done {
				t.Errorf("next job = %s, want done", next.Status)
			}
		})
	}
}

func TestReferencesDiffer(t *testing.T) {
	fail := func(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) { return nil, errors.New("boom") }
	r, _ := startRunner(t, newMemStorage(), jobs.Options{Workers: 2}, map[string]jobs.Func{"fail": fail})
	seen := map[string]bool{}
	for range 20 {
		seen[mustWait(t, r, mustSubmit(t, r, "fail", 0, ``)).Error] = true
	}
	// 20 draws from 2^24 references collide with probability about 1e-5.
	if len(seen) != 20 {
		t.Errorf("20 failures gave %d distinct messages, want 20: %v", len(seen), seen)
	}
}

func TestStartInterruptsLeftovers(t *testing.T) {
	ctx := context.Background()
	st := newMemStorage()
	earlier := t0.Add(-time.Hour)
	// What a crashed process left: a running job, a queued one, and a
	// finished one that must stay as it is.
	running, _ := st.InsertJob(ctx, jobs.Job{Kind: "import", DatasetID: 4, Params: []byte(`{"file":"big.csv"}`),
		Status: jobs.Running, Progress: 55, CreatedBy: "ann", CreatedAt: earlier, StartedAt: earlier})
	queued, _ := st.InsertJob(ctx, jobs.Job{Kind: "import", Status: jobs.Queued, CreatedAt: earlier})
	done, _ := st.InsertJob(ctx, jobs.Job{Kind: "import", Status: jobs.Done, Progress: 100, CreatedAt: earlier, FinishedAt: earlier})

	var params []string
	fn := func(_ context.Context, j jobs.Job, _ *jobs.Progress) ([]byte, error) {
		params = append(params, string(j.Params))
		return []byte(`{}`), nil
	}
	r := jobs.New(st, jobs.Options{Now: fixedClock, Log: discard()})
	r.Register("import", fn)
	n, err := r.Start(ctx)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(r.Stop)
	if n != 2 {
		t.Errorf("Start interrupted %d jobs, want 2", n)
	}
	tests := []struct {
		name         string
		id           int64
		wantStatus   jobs.Status
		wantFinished time.Time
	}{
		{"running", running, jobs.Interrupted, t0},
		{"queued", queued, jobs.Interrupted, t0},
		{"done", done, jobs.Done, earlier},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := mustGet(t, r, tt.id)
			if got.Status != tt.wantStatus || !got.FinishedAt.Equal(tt.wantFinished) {
				t.Errorf("Get(%d) = %s finished %v; want %s finished %v", tt.id, got.Status, got.FinishedAt, tt.wantStatus, tt.wantFinished)
			}
		})
	}

	again, err := r.Rerun(ctx, running, "bo")
	if err != nil {
		t.Fatalf("Rerun(%d): %v", running, err)
	}
	got := mustWait(t, r, again)
	want := jobs.Job{ID: again, Kind: "import", DatasetID: 4, Params: []byte(`{"file":"big.csv"}`), Status: jobs.Done,
		Progress: 100, Result: []byte(`{}`), CreatedBy: "bo", CreatedAt: t0, StartedAt: t0, FinishedAt: t0, RerunOf: running}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("re-run =\n%+v\nwant\n%+v", got, want)
	}
	if !slices.Equal(params, []string{`{"file":"big.csv"}`}) {
		t.Errorf("function ran with params %q, want only the re-run's", params)
	}
	if orig := mustGet(t, r, running); orig.Status != jobs.Interrupted {
		t.Errorf("re-run job is now %s, want it left interrupted", orig.Status)
	}
}

func TestRerun(t *testing.T) {
	ctx := context.Background()
	tests := []struct {
		name     string
		status   jobs.Status
		kind     string
		wantKind problem.Kind // 0: the re-run is accepted
	}{
		{"failed", jobs.Failed, "ok", 0},
		{"cancelled", jobs.Cancelled, "ok", 0},
		{"interrupted", jobs.Interrupted, "ok", 0},
		{"done", jobs.Done, "ok", problem.Conflict},
		{"running", jobs.Running, "ok", problem.Conflict},
		{"queued", jobs.Queued, "ok", problem.Conflict},
		{"kind no longer known", jobs.Failed, "gone", problem.Invalid},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			st := newMemStorage()
			r, _ := startRunner(t, st, jobs.Options{}, map[string]jobs.Func{"ok": succeed})
			// Stored after Start, as another process would, so Start does
			// not interrupt the queued and running ones.
			id, _ := st.InsertJob(ctx, jobs.Job{Kind: tt.kind, DatasetID: 3, Params: []byte(`{"x":1}`), Status: tt.status, CreatedAt: t0})
			again, err := r.Rerun(ctx, id, "bo")
			if tt.wantKind != 0 {
				if !problem.Is(err, tt.wantKind) {
					t.Fatalf("Rerun(%s job) = %d, %v; want a problem of kind %v", tt.status, again, err, tt.wantKind)
				}
				if all, _ := st.ListJobs(ctx, jobs.Filter{}); len(all) != 1 {
					t.Errorf("storage holds %d jobs, want 1 (nothing submitted)", len(all))
				}
				return
			}
			if err != nil {
				t.Fatalf("Rerun(%s job): %v", tt.status, err)
			}
			got := mustWait(t, r, again)
			if got.Status != jobs.Done || got.RerunOf != id || got.DatasetID != 3 || string(got.Params) != `{"x":1}` || got.CreatedBy != "bo" {
				t.Errorf("re-run = %+v; want done, re-running %d, dataset 3, params {\"x\":1}, by bo", got, id)
			}
		})
	}
	t.Run("missing job", func(t *testing.T) {
		r, _ := startRunner(t, newMemStorage(), jobs.Options{}, map[string]jobs.Func{"ok": succeed})
		if _, err := r.Rerun(ctx, 42, "bo"); !problem.Is(err, problem.NotFound) {
			t.Fatalf("Rerun(42) = %v, want problem.NotFound", err)
		}
	})
}

func TestSubmitUnknownKind(t *testing.T) {
	st := newMemStorage()
	r, _ := startRunner(t, st, jobs.Options{}, map[string]jobs.Func{"ok": succeed})
	_, err := r.Submit(context.Background(), "nope", 0, nil, "ann")
	p := problem.As(err)
	if p == nil || p.Kind != problem.Invalid || p.Message != `there is no kind of job called "nope"` {
		t.Fatalf("Submit(nope) = %v, want problem.Invalid naming the kind", err)
	}
	if all, _ := st.ListJobs(context.Background(), jobs.Filter{}); len(all) != 0 {
		t.Errorf("storage holds %d jobs, want none", len(all))
	}
}

func TestProgrammerErrorsPanic(t *testing.T) {
	tests := []struct {
		name string
		do   func()
	}{
		{"kind registered twice", func() {
			r := jobs.New(newMemStorage(), jobs.Options{Now: fixedClock})
			r.Register("import", succeed)
			r.Register("import", succeed)
		}},
		{"no clock", func() { jobs.New(newMemStorage(), jobs.Options{}) }},
		{"no function", func() { jobs.New(newMemStorage(), jobs.Options{Now: fixedClock}).Register("import", nil) }},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Errorf("%s did not panic", tt.name)
				}
			}()
			tt.do()
		})
	}
}

func TestWorkers(t *testing.T) {
	tests := []struct {
		name        string
		workers     int
		wantSecond  jobs.Status // the second job's status while the first blocks
		wantStarted int         // gated jobs started before any is released
	}{
		{"one worker runs one job at a time", 1, jobs.Queued, 1},
		{"two workers run two jobs at once", 2, jobs.Running, 2},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			g := newGate()
			r, _ := startRunner(t, newMemStorage(), jobs.Options{Workers: tt.workers}, map[string]jobs.Func{"block": g.run})
			// Both jobs concern the same dataset, which does not serialise them.
			first := mustSubmit(t, r, "block", 1, ``)
			second := mustSubmit(t, r, "block", 1, ``)
			var started []int64
			for range tt.wantStarted {
				started = append(started, g.waitStarted(t))
			}
			if got := mustGet(t, r, second).Status; got != tt.wantSecond {
				t.Errorf("second job is %s while the first blocks, want %s", got, tt.wantSecond)
			}
			if tt.wantStarted == 1 && started[0] != first {
				t.Errorf("job %d started first, want %d", started[0], first)
			}
			close(g.release)
			for _, id := range []int64{first, second} {
				if got := mustWait(t, r, id); got.Status != jobs.Done {
					t.Errorf("job %d = %s, want done", id, got.Status)
				}
			}
		})
	}
}

func TestJobsRunInOrderOfSubmission(t *testing.T) {
	g := newGate()
	order := make(chan int64, 8)
	record := func(_ context.Context, j jobs.Job, _ *jobs.Progress) ([]byte, error) { order <- j.ID; return nil, nil }
	r, _ := startRunner(t, newMemStorage(), jobs.Options{}, map[string]jobs.Func{"block": g.run, "record": record})
	first := mustSubmit(t, r, "block", 0, ``)
	g.waitStarted(t)
	var want []int64
	for range 4 {
		want = append(want, mustSubmit(t, r, "record", 0, ``))
	}
	close(g.release)
	mustWait(t, r, first)
	var got []int64
	for _, id := range want {
		mustWait(t, r, id)
		got = append(got, <-order)
	}
	if !slices.Equal(got, want) {
		t.Errorf("ran %v, want %v", got, want)
	}
}

func TestStop(t *testing.T) {
	ctx := context.Background()
	st := newMemStorage()
	g := newGate()
	r := jobs.New(st, jobs.Options{Now: fixedClock, Log: discard()})
	r.Register("block", g.run)
	if _, err := r.Submit(ctx, "block", 0, nil, "ann"); !errors.Is(err, jobs.ErrNotRunning) {
		t.Errorf("Submit before Start = %v, want ErrNotRunning", err)
	}
	if _, err := r.Start(ctx); err != nil {
		t.Fatal(err)
	}
	if _, err := r.Start(ctx); err == nil {
		t.Error("second Start succeeded, want an error")
	}
	running := mustSubmit(t, r, "block", 0, ``)
	g.waitStarted(t)
	queued := mustSubmit(t, r, "block", 0, ``)

	r.Stop() // returns only once the running job has ended

	if got := st.stored(t, running); got.Status != jobs.Interrupted || got.FinishedAt.IsZero() || got.Progress != 40 {
		t.Errorf("running job after Stop: %+v; want interrupted at 40%% with a finish time", got)
	}
	if got := st.stored(t, queued); got.Status != jobs.Queued {
		t.Errorf("queued job after Stop: %s, want still queued", got.Status)
	}
	if got := mustWait(t, r, running); got.Status != jobs.Interrupted {
		t.Errorf("Wait(running) after Stop = %s, want interrupted", got.Status)
	}
	if got, err := r.Wait(ctx, queued); !errors.Is(err, jobs.ErrNotRunning) || got.Status != jobs.Queued {
		t.Errorf("Wait(queued) after Stop = %s, %v; want queued, ErrNotRunning", got.Status, err)
	}
	if _, err := r.Submit(ctx, "block", 0, nil, "ann"); !errors.Is(err, jobs.ErrNotRunning) {
		t.Errorf("Submit after Stop = %v, want ErrNotRunning", err)
	}
	r.Stop() // a second Stop is harmless

	// The next runner on the same storage interrupts the job left queued.
	r2 := jobs.New(st, jobs.Options{Now: fixedClock, Log: discard()})
	n, err := r2.Start(ctx)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(r2.Stop)
	if n != 1 {
		t.Errorf("next Start interrupted %d jobs, want 1", n)
	}
	// Wait reads finished jobs from storage.
	for _, id := range []int64{running, queued} {
		if got := mustWait(t, r2, id); got.Status != jobs.Interrupted {
			t.Errorf("Wait(%d) on the next runner = %s, want interrupted", id, got.Status)
		}
	}
}

func TestStartContextEndsJobs(t *testing.T) {
	st := newMemStorage()
	g := newGate()
	r := jobs.New(st, jobs.Options{Now: fixedClock, Log: discard()})
	r.Register("block", g.run)
	ctx, cancel := context.WithCancel(context.Background())
	if _, err := r.Start(ctx); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(r.Stop)
	id := mustSubmit(t, r, "block", 0, ``)
	g.waitStarted(t)
	cancel()
	if got := mustWait(t, r, id); got.Status != jobs.Interrupted {
		t.Errorf("job after Start's context ended = %s, want interrupted", got.Status)
	}
	if _, err := r.Submit(context.Background(), "block", 0, nil, "ann"); !errors.Is(err, jobs.ErrNotRunning) {
		t.Errorf("Submit after Start's context ended = %v, want ErrNotRunning", err)
	}
}

func TestWait(t *testing.T) {
	ctx := context.Background()
	st := newMemStorage()
	g := newGate()
	r, _ := startRunner(t, st, jobs.Options{}, map[string]jobs.Func{"block": g.run})

	t.Run("finished before", func(t *testing.T) {
		id, _ := st.InsertJob(ctx, jobs.Job{Kind: "block", Status: jobs.Failed, Error: "no orders", CreatedAt: t0, FinishedAt: t0})
		if got := mustWait(t, r, id); got.Status != jobs.Failed || got.Error != "no orders" {
			t.Errorf("Wait = %s %q, want failed \"no orders\"", got.Status, got.Error)
		}
	})
	t.Run("missing", func(t *testing.T) {
		if _, err := r.Wait(ctx, 1000); !problem.Is(err, problem.NotFound) {
			t.Errorf("Wait(1000) = %v, want problem.NotFound", err)
		}
	})
	t.Run("unfinished and not ours", func(t *testing.T) {
		id, _ := st.InsertJob(ctx, jobs.Job{Kind: "block", Status: jobs.Running, CreatedAt: t0})
		if _, err := r.Wait(ctx, id); !errors.Is(err, jobs.ErrNotRunning) {
			t.Errorf("Wait = %v, want ErrNotRunning", err)
		}
	})
	t.Run("context ends first", func(t *testing.T) {
		id := mustSubmit(t, r, "block", 0, ``)
		g.waitStarted(t)
		wctx, cancel := context.WithCancel(ctx)
		cancel()
		if _, err := r.Wait(wctx, id); !errors.Is(err, context.Canceled) {
			t.Errorf("Wait with a cancelled context = %v, want context.Canceled", err)
		}
		if got := mustGet(t, r, id); got.Status != jobs.Running {
			t.Errorf("job = %s after its waiter gave up, want still running", got.Status)
		}
		close(g.release)
		if got := mustWait(t, r, id); got.Status != jobs.Done {
			t.Errorf("Wait = %s, want done", got.Status)
		}
	})
}

func TestStatusFinished(t *testing.T) {
	tests := []struct {
		status jobs.Status
		want   bool
	}{
		{jobs.Queued, false}, {jobs.Running, false}, {jobs.Done, true},
		{jobs.Failed, true}, {jobs.Cancelled, true}, {jobs.Interrupted, true}, {"", false},
	}
	for _, tt := range tests {
		t.Run(string(tt.status), func(t *testing.T) {
			if got := tt.status.Finished(); got != tt.want {
				t.Errorf("Status(%q).Finished() = %v, want %v", tt.status, got, tt.want)
			}
		})
	}
}

// With ticks the test sends, the writes of a running job's progress are
// exact: one per tick on which something changed since the last write.
func TestProgressWrittenOnlyWhenChanged(t *testing.T) {
	st := newMemStorage()
	ticks := make(chan time.Time)
	handed, release := make(chan *jobs.Progress, 1), make(chan struct{})
	fn := func(ctx context.Context, _ jobs.Job, p *jobs.Progress) ([]byte, error) {
		handed <- p
		select {
		case <-release:
			return nil, nil
		case <-ctx.Done():
			return nil, ctx.Err()
		}
	}
	r := jobs.New(st, jobs.Options{Now: fixedClock, Log: discard()})
	r.SetTicks(ticks)
	r.Register("train", fn)
	if _, err := r.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(r.Stop)
	id := mustSubmit(t, r, "train", 0, ``)
	var p *jobs.Progress
	select {
	case p = <-handed:
	case <-time.After(guard):
		t.Fatal("job never started")
	}
	// tick sends three ticks. The worker takes a tick only after handling
	// the one before, so once the third is taken the first two have been
	// handled; the third finds nothing new.
	tick := func() {
		t.Helper()
		for range 3 {
			select {
			case ticks <- t0:
			case <-time.After(guard):
				t.Fatal("the worker took no tick")
			}
		}
	}
	writes := func() []string {
		st.mu.Lock()
		defer st.mu.Unlock()
		var out []string
		for _, u := range st.updates {
			if u.ID == id {
				out = append(out, fmt.Sprintf("%s %v %s", u.Status, u.Progress, u.Message))
			}
		}
		return out
	}
	steps := []struct {
		name string
		set  func()
		want []string
	}{
		{"nothing set", func() {}, []string{"running 0 "}},
		{"percentage and message", func() { p.Set(30, "a") }, []string{"running 0 ", "running 30 a"}},
		{"lower percentage, same message", func() { p.Set(10, "a") }, []string{"running 0 ", "running 30 a"}},
		{"message only", func() { p.Set(30, "b") }, []string{"running 0 ", "running 30 a", "running 30 b"}},
		{"several sets between ticks", func() { p.Set(40, "c"); p.Set(50, "d"); p.Set(60, "") },
			[]string{"running 0 ", "running 30 a", "running 30 b", "running 60 d"}},
	}
	for _, step := range steps {
		step.set()
		tick()
		if got := writes(); !slices.Equal(got, step.want) {
			t.Fatalf("after %s: writes = %q, want %q", step.name, got, step.want)
		}
	}
	close(release)
	mustWait(t, r, id)
	if got, want := writes(), "done 100 d"; got[len(got)-1] != want {
		t.Errorf("last write = %q, want %q", got[len(got)-1], want)
	}
}
