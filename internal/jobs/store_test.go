package jobs_test

import (
	"context"
	"path/filepath"
	"reflect"
	"slices"
	"testing"
	"time"

	"ebb/internal/jobs"
	"ebb/internal/problem"
	"ebb/internal/store"
)

// signalStore is the SQLite store, signalling each UpdateJob so a test can
// wait for a progress write without sleeping.
type signalStore struct {
	*store.Store
	wrote chan struct{}
}

func (s signalStore) UpdateJob(ctx context.Context, j jobs.Job) error {
	err := s.Store.UpdateJob(ctx, j)
	select {
	case s.wrote <- struct{}{}:
	default:
	}
	return err
}

func openStore(t *testing.T) signalStore {
	t.Helper()
	st, err := store.Open(context.Background(), filepath.Join(t.TempDir(), "j.db"), store.Options{Now: fixedClock})
	if err != nil {
		t.Fatalf("store.Open: %v", err)
	}
	t.Cleanup(func() { st.Close() })
	return signalStore{Store: st, wrote: make(chan struct{}, 1)}
}

// The runner on the SQLite store: restart recovery, re-run, live and
// periodically written progress, failure and cancellation, listing.
func TestRunnerOnStore(t *testing.T) {
	ctx := context.Background()
	st := openStore(t)
	leftover, err := st.InsertJob(ctx, jobs.Job{Kind: "import", DatasetID: 4, Params: []byte(`{"file":"big.csv"}`),
		Status: jobs.Running, Progress: 55, CreatedBy: "ann", CreatedAt: t0.Add(-time.Hour), StartedAt: t0.Add(-time.Hour)})
	if err != nil {
		t.Fatal(err)
	}

	g, g2 := newGate(), newGate()
	fail := func(context.Context, jobs.Job, *jobs.Progress) ([]byte, error) {
		return []byte(`{"report":"problems.csv"}`), problem.New(problem.Invalid, "2 rows have no customer")
	}
	// A clock below the second: the runner keeps what storage keeps, so a
	// job from Wait equals the same job read back from SQLite.
	clock := func() time.Time { return t0.Add(700 * time.Millisecond) }
	r := jobs.New(st, jobs.Options{Now: clock, PersistEvery: 20 * time.Millisecond, Log: discard()})
	r.Register("import", g.run)
	r.Register("check", fail)
	r.Register("block", g2.run)
	n, err := r.Start(ctx)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(r.Stop)
	if n != 1 {
		t.Errorf("Start interrupted %d jobs, want 1", n)
	}
	if got := mustGet(t, r, leftover); got.Status != jobs.Interrupted || !got.FinishedAt.Equal(t0) || got.Progress != 55 {
		t.Errorf("leftover = %s %v%% finished %v; want interrupted at 55%%, finished %v", got.Status, got.Progress, got.FinishedAt, t0)
	}

	again, err := r.Rerun(ctx, leftover, "bo")
	if err != nil {
		t.Fatal(err)
	}
	g.waitStarted(t)
	if got := mustGet(t, r, again); got.Status != jobs.Running || got.Progress != 40 || got.Message != "reading" {
		t.Errorf("Get while running = %s %v%% %q, want running 40%% \"reading\"", got.Status, got.Progress, got.Message)
	}
	deadline := time.After(guard)
	for {
		j, err := st.JobByID(ctx, again)
		if err != nil {
			t.Fatal(err)
		}
		if j.Status == jobs.Running && j.Progress == 40 && j.Message == "reading" {
			break
		}
		select {
		case <-st.wrote:
		case <-deadline:
			t.Fatalf("SQLite never saw the running job's progress; last: %+v", j)
		}
	}
	close(g.release)
	got := mustWait(t, r, again)
	want := jobs.Job{ID: again, Kind: "import", DatasetID: 4, Params: []byte(`{"file":"big.csv"}`), Status: jobs.Done,
		Progress: 100, Message: "reading", Result: []byte(`{"ok":true}`), CreatedBy: "bo",
		CreatedAt: t0, StartedAt: t0, FinishedAt: t0, RerunOf: leftover}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("Wait =\n%+v\nwant\n%+v", got, want)
	}
	if stored, err := st.JobByID(ctx, again); err != nil || !reflect.DeepEqual(stored, want) {
		t.Errorf("stored = %+v, %v\nwant %+v", stored, err, want)
	}

	failed := mustSubmit(t, r, "check", 4, `{}`)
	if got := mustWait(t, r, failed); got.Status != jobs.Failed || got.Error != "2 rows have no customer" || string(got.Result) != `{"report":"problems.csv"}` {
		t.Errorf("failed job = %+v; want failed with the problem's message and the report", got)
	}
	if _, err := r.Rerun(ctx, again, "bo"); !problem.Is(err, problem.Conflict) {
		t.Errorf("Rerun of a done job = %v, want problem.Conflict", err)
	}

	cancelled := mustSubmit(t, r, "block", 5, `{}`)
	g2.waitStarted(t)
	if err := r.Cancel(ctx, cancelled); err != nil {
		t.Fatal(err)
	}
	mustWait(t, r, cancelled)
	if stored, err := st.JobByID(ctx, cancelled); err != nil || stored.Status != jobs.Cancelled {
		t.Errorf("stored cancelled job = %+v, %v; want cancelled", stored, err)
	}

	tests := []struct {
		name   string
		filter jobs.Filter
		want   []int64
	}{
		{"dataset 4", jobs.Filter{DatasetID: 4}, []int64{failed, again, leftover}},
		{"dataset 5", jobs.Filter{DatasetID: 5}, []int64{cancelled}},
		{"newest two", jobs.Filter{Limit: 2}, []int64{cancelled, failed}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			js, err := r.List(ctx, tt.filter)
			if err != nil {
				t.Fatal(err)
			}
			var ids []int64
			for _, j := range js {
				ids = append(ids, j.ID)
			}
			if !slices.Equal(ids, tt.want) {
				t.Errorf("List(%+v) = %v, want %v", tt.filter, ids, tt.want)
			}
		})
	}
	if _, err := r.Get(ctx, 999); !problem.Is(err, problem.NotFound) {
		t.Errorf("Get(999) = %v, want problem.NotFound", err)
	}
}
