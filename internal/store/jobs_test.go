package store

import (
	"context"
	"reflect"
	"slices"
	"testing"
	"time"

	"ebb/internal/jobs"
	"ebb/internal/problem"
)

// mustInsertJob stores j and returns it with its id, as JobByID should
// return it.
func mustInsertJob(t *testing.T, st *Store, j jobs.Job) jobs.Job {
	t.Helper()
	id, err := st.InsertJob(context.Background(), j)
	if err != nil {
		t.Fatalf("InsertJob(%+v): %v", j, err)
	}
	j.ID = id
	return j
}

func mustJob(t *testing.T, st *Store, id int64) jobs.Job {
	t.Helper()
	j, err := st.JobByID(context.Background(), id)
	if err != nil {
		t.Fatalf("JobByID(%d): %v", id, err)
	}
	return j
}

func TestJobRoundTrip(t *testing.T) {
	cet := time.FixedZone("CET", 3600)
	tests := []struct {
		name string
		in   jobs.Job
		want jobs.Job // ID is filled in
	}{
		{
			name: "every field set",
			in: jobs.Job{
				// Dataset 42 does not exist: jobs stay as history when their
				// dataset is deleted, so there is no foreign key to refuse it.
				Kind: "import", DatasetID: 42, Params: []byte(`{"file":"orders.csv"}`),
				Status: jobs.Failed, Progress: 37.5, Message: "reading orders", Error: "orders.csv line 3: bad date",
				Result: []byte(`{"report":"r.csv"}`), CreatedBy: "ann",
				CreatedAt:  time.Date(2026, 12, 1, 13, 0, 0, 0, cet),
				StartedAt:  time.Date(2026, 12, 1, 12, 0, 5, 0, time.UTC),
				FinishedAt: time.Date(2026, 12, 1, 12, 1, 0, 0, time.UTC),
				RerunOf:    7,
			},
			want: jobs.Job{
				Kind: "import", DatasetID: 42, Params: []byte(`{"file":"orders.csv"}`),
				Status: jobs.Failed, Progress: 37.5, Message: "reading orders", Error: "orders.csv line 3: bad date",
				Result: []byte(`{"report":"r.csv"}`), CreatedBy: "ann",
				CreatedAt:  time.Date(2026, 12, 1, 12, 0, 0, 0, time.UTC), // stored in UTC
				StartedAt:  time.Date(2026, 12, 1, 12, 0, 5, 0, time.UTC),
				FinishedAt: time.Date(2026, 12, 1, 12, 1, 0, 0, time.UTC),
				RerunOf:    7,
			},
		},
		{
			name: "only kind, status and creation time",
			in:   jobs.Job{Kind: "train", Status: jobs.Queued, CreatedAt: fixedNow},
			want: jobs.Job{Kind: "train", Status: jobs.Queued, CreatedAt: fixedNow},
		},
		{
			name: "time below a second is dropped",
			in:   jobs.Job{Kind: "score", Status: jobs.Queued, CreatedAt: fixedNow.Add(900 * time.Millisecond)},
			want: jobs.Job{Kind: "score", Status: jobs.Queued, CreatedAt: fixedNow},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			st := mustOpenStore(t)
			in := mustInsertJob(t, st, tt.in)
			tt.want.ID = in.ID
			got := mustJob(t, st, in.ID)
			if !reflect.DeepEqual(got, tt.want) {
				t.Errorf("JobByID(%d) =\n%+v\nwant\n%+v", in.ID, got, tt.want)
			}
			for name, tm := range map[string]time.Time{"CreatedAt": got.CreatedAt, "StartedAt": got.StartedAt, "FinishedAt": got.FinishedAt} {
				if tm.Location() != time.UTC {
					t.Errorf("%s location = %v, want UTC", name, tm.Location())
				}
			}
		})
	}
}

// The stored form is what the migration promises: RFC 3339 UTC text, JSON
// as text, NULL for a zero time, dataset or re-run.
func TestJobStoredForm(t *testing.T) {
	st := mustOpenStore(t)
	full := mustInsertJob(t, st, jobs.Job{Kind: "import", DatasetID: 3, Params: []byte(`{"a":1}`), Status: jobs.Running,
		CreatedAt: fixedNow, StartedAt: fixedNow.Add(time.Second), RerunOf: 1})
	bare := mustInsertJob(t, st, jobs.Job{Kind: "import", Status: jobs.Queued, CreatedAt: fixedNow})
	type row struct {
		params, created, started, finished, dataset, rerun string // typeof or value
	}
	tests := []struct {
		name string
		id   int64
		want row
	}{
		{"full", full.ID, row{"text", fixedStamp, "2026-12-01T12:00:01Z", "null", "integer", "integer"}},
		{"bare", bare.ID, row{"null", fixedStamp, "null", "null", "null", "null"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var got row
			err := st.r.QueryRow(`SELECT typeof(params), created_at, COALESCE(started_at, 'null'),
				COALESCE(finished_at, 'null'), typeof(dataset_id), typeof(rerun_of) FROM jobs WHERE id = ?`, tt.id).
				Scan(&got.params, &got.created, &got.started, &got.finished, &got.dataset, &got.rerun)
			if err != nil {
				t.Fatal(err)
			}
			if got != tt.want {
				t.Errorf("stored row = %+v, want %+v", got, tt.want)
			}
		})
	}
}

func TestUpdateJob(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	orig := mustInsertJob(t, st, jobs.Job{Kind: "import", DatasetID: 5, Params: []byte(`{"p":1}`), Status: jobs.Queued,
		CreatedBy: "bo", CreatedAt: fixedNow, RerunOf: 2})
	steps := []struct {
		name string
		set  func(j *jobs.Job)
	}{
		{"running", func(j *jobs.Job) {
			j.Status, j.StartedAt, j.Progress, j.Message = jobs.Running, fixedNow.Add(time.Second), 10, "reading"
		}},
		{"progress", func(j *jobs.Job) { j.Progress, j.Message = 60.25, "writing" }},
		{"failed with a result", func(j *jobs.Job) {
			j.Status, j.Error, j.Result, j.FinishedAt = jobs.Failed, "the file is empty", []byte(`{"report":"x"}`), fixedNow.Add(time.Minute)
		}},
		{"result cleared", func(j *jobs.Job) { j.Result = nil }},
	}
	want := orig
	for _, step := range steps {
		t.Run(step.name, func(t *testing.T) {
			step.set(&want)
			// Fields UpdateJob does not write are ignored.
			in := want
			in.Kind, in.DatasetID, in.Params, in.CreatedBy, in.CreatedAt, in.RerunOf = "other", 99, []byte(`{}`), "x", fixedNow.Add(time.Hour), 0
			if err := st.UpdateJob(ctx, in); err != nil {
				t.Fatalf("UpdateJob: %v", err)
			}
			if got := mustJob(t, st, orig.ID); !reflect.DeepEqual(got, want) {
				t.Errorf("after UpdateJob, JobByID =\n%+v\nwant\n%+v", got, want)
			}
		})
	}
	t.Run("missing job", func(t *testing.T) {
		err := st.UpdateJob(ctx, jobs.Job{ID: orig.ID + 100, Kind: "import", Status: jobs.Done})
		if !problem.Is(err, problem.NotFound) {
			t.Fatalf("UpdateJob of a missing job: err = %v, want problem.NotFound", err)
		}
	})
}

func TestInsertJobRefusesBadRows(t *testing.T) {
	tests := []struct {
		name string
		job  jobs.Job
	}{
		{"unknown status", jobs.Job{Kind: "import", Status: "paused", CreatedAt: fixedNow}},
		{"no status", jobs.Job{Kind: "import", CreatedAt: fixedNow}},
		{"no kind", jobs.Job{Status: jobs.Queued, CreatedAt: fixedNow}},
		{"progress above 100", jobs.Job{Kind: "import", Status: jobs.Running, Progress: 101, CreatedAt: fixedNow}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			st := mustOpenStore(t)
			if id, err := st.InsertJob(context.Background(), tt.job); err == nil {
				t.Fatalf("InsertJob(%+v) = %d, nil; want an error", tt.job, id)
			}
		})
	}
}

func TestJobByIDMissing(t *testing.T) {
	st := mustOpenStore(t)
	_, err := st.JobByID(context.Background(), 99)
	p := problem.As(err)
	if p == nil || p.Kind != problem.NotFound || p.Message != "there is no job 99" {
		t.Fatalf("JobByID(99) error = %v, want problem.NotFound %q", err, "there is no job 99")
	}
}

func TestListJobs(t *testing.T) {
	st := mustOpenStore(t)
	// Ids 1…6; datasets 1, 2, none, 1, 2, 1. Creation times all equal, so
	// newest first can only come from the ids.
	for _, ds := range []int64{1, 2, 0, 1, 2, 1} {
		mustInsertJob(t, st, jobs.Job{Kind: "import", DatasetID: ds, Status: jobs.Done, CreatedAt: fixedNow})
	}
	tests := []struct {
		name   string
		filter jobs.Filter
		want   []int64
	}{
		{"all", jobs.Filter{}, []int64{6, 5, 4, 3, 2, 1}},
		{"one dataset", jobs.Filter{DatasetID: 1}, []int64{6, 4, 1}},
		{"other dataset", jobs.Filter{DatasetID: 2}, []int64{5, 2}},
		{"limit", jobs.Filter{Limit: 2}, []int64{6, 5}},
		{"dataset and limit", jobs.Filter{DatasetID: 1, Limit: 2}, []int64{6, 4}},
		{"limit above count", jobs.Filter{DatasetID: 2, Limit: 10}, []int64{5, 2}},
		{"negative limit is no limit", jobs.Filter{DatasetID: 2, Limit: -1}, []int64{5, 2}},
		{"dataset without jobs", jobs.Filter{DatasetID: 9}, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			js, err := st.ListJobs(context.Background(), tt.filter)
			if err != nil {
				t.Fatal(err)
			}
			var got []int64
			for _, j := range js {
				got = append(got, j.ID)
				if tt.filter.DatasetID != 0 && j.DatasetID != tt.filter.DatasetID {
					t.Errorf("job %d has dataset %d, want %d", j.ID, j.DatasetID, tt.filter.DatasetID)
				}
			}
			if !slices.Equal(got, tt.want) {
				t.Errorf("ListJobs(%+v) ids = %v, want %v", tt.filter, got, tt.want)
			}
		})
	}
}

func TestInterruptJobs(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	earlier := fixedNow.Add(-time.Hour)
	ids := map[jobs.Status]int64{}
	for _, s := range []jobs.Status{jobs.Queued, jobs.Running, jobs.Done, jobs.Failed, jobs.Cancelled, jobs.Interrupted} {
		j := jobs.Job{Kind: "import", Status: s, CreatedAt: earlier}
		if s != jobs.Queued {
			j.StartedAt = earlier
		}
		if s.Finished() {
			j.FinishedAt = earlier
		}
		ids[s] = mustInsertJob(t, st, j).ID
	}
	at := time.Date(2026, 12, 2, 8, 0, 0, 0, time.UTC)
	n, err := st.InterruptJobs(ctx, at)
	if err != nil {
		t.Fatal(err)
	}
	if n != 2 {
		t.Errorf("InterruptJobs = %d, want 2 (the queued and the running job)", n)
	}
	tests := []struct {
		name         string
		before       jobs.Status
		wantStatus   jobs.Status
		wantFinished time.Time
	}{
		{"queued", jobs.Queued, jobs.Interrupted, at},
		{"running", jobs.Running, jobs.Interrupted, at},
		{"done untouched", jobs.Done, jobs.Done, earlier},
		{"failed untouched", jobs.Failed, jobs.Failed, earlier},
		{"cancelled untouched", jobs.Cancelled, jobs.Cancelled, earlier},
		{"interrupted before untouched", jobs.Interrupted, jobs.Interrupted, earlier},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			j := mustJob(t, st, ids[tt.before])
			if j.Status != tt.wantStatus || !j.FinishedAt.Equal(tt.wantFinished) {
				t.Errorf("job once %s: status %s, finished %v; want %s, %v", tt.before, j.Status, j.FinishedAt, tt.wantStatus, tt.wantFinished)
			}
		})
	}
	if n, err := st.InterruptJobs(ctx, at); err != nil || n != 0 {
		t.Errorf("second InterruptJobs = %d, %v; want 0, nil", n, err)
	}
}

// A job's dataset may be deleted while the job stays as history.
func TestJobOutlivesItsDataset(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	imp := importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2026-01-05", 10, ""}))
	j := mustInsertJob(t, st, jobs.Job{Kind: "import", DatasetID: imp.DatasetID, Status: jobs.Done, CreatedAt: fixedNow})
	if _, err := st.w.ExecContext(ctx, `DELETE FROM datasets WHERE id = ?`, imp.DatasetID); err != nil {
		t.Fatalf("delete dataset %d with a job: %v", imp.DatasetID, err)
	}
	if got := mustJob(t, st, j.ID); got.DatasetID != imp.DatasetID {
		t.Errorf("job dataset = %d, want %d", got.DatasetID, imp.DatasetID)
	}
	var n int
	if err := st.r.QueryRow(`SELECT count(*) FROM datasets WHERE id = ?`, imp.DatasetID).Scan(&n); err != nil || n != 0 {
		t.Fatalf("datasets left = %d, %v; want 0", n, err)
	}
}
