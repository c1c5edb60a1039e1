package analysis_test

import (
	"bytes"
	"context"
	"encoding/json"
	"strings"
	"testing"
	"time"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/jobs"
	"ebb/internal/lists"
	"ebb/internal/problem"
	"ebb/internal/store"
)

func TestLatestSlot(t *testing.T) {
	// 2026-12-02 is a Wednesday.
	at := func(s string) time.Time {
		t.Helper()
		v, err := time.Parse("2006-01-02 15:04", s)
		if err != nil {
			t.Fatal(err)
		}
		return v
	}
	tests := []struct {
		name    string
		weekday time.Weekday
		clock   string
		now     string
		want    string
	}{
		{"earlier this week", time.Monday, "06:00", "2026-12-02 10:00", "2026-11-30 06:00"},
		{"today, already past", time.Wednesday, "06:00", "2026-12-02 10:00", "2026-12-02 06:00"},
		{"today, not yet", time.Wednesday, "11:30", "2026-12-02 10:00", "2026-11-25 11:30"},
		{"later this week: last week's", time.Friday, "06:00", "2026-12-02 10:00", "2026-11-27 06:00"},
		{"exactly now", time.Wednesday, "10:00", "2026-12-02 10:00", "2026-12-02 10:00"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := analysis.LatestSlot(store.Schedule{Weekday: tt.weekday, At: tt.clock}, at(tt.now))
			if err != nil || !got.Equal(at(tt.want)) {
				t.Errorf("LatestSlot = %v, %v; want %s", got, err, tt.want)
			}
		})
	}
	for _, bad := range []string{"6:00x", "24:00", "06:60", "0600", "", "06:5"} {
		if _, _, err := analysis.ParseClock(bad); !problem.Is(err, problem.Invalid) {
			t.Errorf("ParseClock(%q) = %v, want a sentence", bad, err)
		}
	}
}

// recorder is a job queue that keeps what it is given.
type recorder struct{ params []analysis.ScheduledParams }

func (r *recorder) Submit(_ context.Context, kind string, datasetID int64, params []byte, by string) (int64, error) {
	var p analysis.ScheduledParams
	if err := json.Unmarshal(params, &p); err != nil || kind != analysis.KindScheduledList || by != "schedule" || p.DatasetID != datasetID {
		return 0, err
	}
	r.params = append(r.params, p)
	return int64(len(r.params)), nil
}

// Each slot runs once; a slot missed while the server was down runs once
// at the next start, marked missed; slots before the schedule was saved
// never run.
func TestRunDueSchedules(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	res := mustImport(t, st, analysis.ImportRequest{Dataset: "s", Orders: source("o.csv", []byte("customer_id,order_date\nA,2024-01-01\n")), Now: scoreNow})
	id := res.Import.DatasetID
	saved := time.Date(2026, 11, 20, 12, 0, 0, 0, time.UTC) // a Friday
	rule, _ := json.Marshal(analysis.ScheduleRule{Rule: analysis.ListRule{Size: 10}, Holdout: 0.1, Bands: lists.DefaultBands})
	if err := st.SaveSchedule(ctx, store.Schedule{DatasetID: id, Weekday: time.Monday, At: "06:00", Rule: rule, Enabled: true, CreatedBy: "t", CreatedAt: saved}); err != nil {
		t.Fatal(err)
	}
	q := &recorder{}
	run := func(now time.Time) int {
		t.Helper()
		n, err := analysis.RunDueSchedules(ctx, st, q, now, 10*time.Minute)
		if err != nil {
			t.Fatal(err)
		}
		return n
	}
	// Saturday: the last Monday slot (11-16) is before the schedule existed.
	if n := run(time.Date(2026, 11, 21, 9, 0, 0, 0, time.UTC)); n != 0 {
		t.Errorf("a slot before the schedule ran: %d jobs", n)
	}
	// Monday 06:02: the slot is due, on time.
	if n := run(time.Date(2026, 11, 23, 6, 2, 0, 0, time.UTC)); n != 1 || q.params[0].Missed || !q.params[0].Slot.Equal(time.Date(2026, 11, 23, 6, 0, 0, 0, time.UTC)) {
		t.Fatalf("on time: %d jobs, %+v", n, q.params)
	}
	if n := run(time.Date(2026, 11, 23, 6, 30, 0, 0, time.UTC)); n != 0 {
		t.Errorf("the same slot ran twice")
	}
	// The server was down over the next two Mondays: one run, missed.
	if n := run(time.Date(2026, 12, 9, 8, 0, 0, 0, time.UTC)); n != 1 || !q.params[1].Missed || !q.params[1].Slot.Equal(time.Date(2026, 12, 7, 6, 0, 0, 0, time.UTC)) {
		t.Fatalf("after downtime: %d jobs, %+v", n, q.params)
	}
	sc, err := st.ScheduleOf(ctx, id)
	if err != nil || !strings.Contains(analysis.DescribeSchedule(sc), "missed while the server was down") {
		t.Errorf("schedule %q, %v", analysis.DescribeSchedule(sc), err)
	}
}

// A scheduled run with no new data since the latest list is skipped and
// says so; after an append it drafts the list.
func TestScheduledListJob(t *testing.T) {
	ctx := context.Background()
	e := newListEnv(t, "logistic")
	rule, _ := json.Marshal(analysis.ScheduleRule{Rule: analysis.ListRule{Size: 50}, Holdout: 0.1, Bands: lists.DefaultBands})
	if err := e.st.SaveSchedule(ctx, store.Schedule{DatasetID: e.dataset.ID, Weekday: time.Monday, At: "06:00", Rule: rule, Enabled: true, CreatedBy: "t", CreatedAt: scoreNow}); err != nil {
		t.Fatal(err)
	}
	job := analysis.ScheduledListJob(e.st, e.cache, func() time.Time { return scoreNow })
	runJob := func(missed bool) analysis.ScheduledResult {
		t.Helper()
		params, _ := json.Marshal(analysis.ScheduledParams{DatasetID: e.dataset.ID, Slot: scoreNow, Missed: missed})
		out, err := job(ctx, jobs.Job{ID: 1, Kind: analysis.KindScheduledList, Params: params, CreatedBy: "schedule"}, &jobs.Progress{})
		if err != nil {
			t.Fatal(err)
		}
		var res analysis.ScheduledResult
		if err := json.Unmarshal(out, &res); err != nil {
			t.Fatal(err)
		}
		return res
	}
	first := runJob(false)
	if first.Skipped || first.ListID == 0 || first.Summary.Selected != 50 {
		t.Fatalf("first run: %+v", first)
	}
	again := runJob(true)
	if !again.Skipped || !strings.Contains(again.Note, "no new data") || !strings.Contains(again.Note, "missed while the server was down") {
		t.Errorf("second run: %+v", again)
	}
	// New orders arrive: the next run drafts a list again.
	d, _ := e.st.DatasetByID(ctx, e.dataset.ID)
	key := e.biz.Customers[0].Key
	var more bytes.Buffer
	if err := demo.WriteOrderList(&more, []demo.Order{{CustomerKey: key, Date: d.LastDay.Time().AddDate(0, 0, 1), Amount: 12, ID: "LR-NEW-1"}}); err != nil {
		t.Fatal(err)
	}
	mustImport(t, e.st, analysis.ImportRequest{Dataset: "demo", Append: true, Orders: source("more.csv", more.Bytes()), Now: scoreNow})
	if third := runJob(false); third.Skipped || third.ListID == first.ListID {
		t.Errorf("after new data: %+v", third)
	}
}
