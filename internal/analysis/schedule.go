package analysis

import (
	"context"
	"encoding/json"
	"fmt"
	"strconv"
	"strings"
	"time"

	"ebb/internal/jobs"
	"ebb/internal/lists"
	"ebb/internal/problem"
	"ebb/internal/store"
)

// ScheduleRule is what a scheduled run drafts: the list's rule, holdout
// share and bands (stored as the schedule's JSON).
type ScheduleRule struct {
	Rule    ListRule    `json:"rule"`
	Holdout float64     `json:"holdout"`
	Bands   lists.Bands `json:"bands"`
}

// ParseClock reads a time of day, HH:MM in 24 hours.
func ParseClock(s string) (hour, minute int, err error) {
	h, m, ok := strings.Cut(strings.TrimSpace(s), ":")
	hour, err1 := strconv.Atoi(h)
	minute, err2 := strconv.Atoi(m)
	if !ok || err1 != nil || err2 != nil || len(m) != 2 || hour < 0 || hour > 23 || minute < 0 || minute > 59 {
		return 0, 0, problem.New(problem.Invalid, "the time %q is not a time of day (want HH:MM, 24 hours)", s)
	}
	return hour, minute, nil
}

// LatestSlot returns the schedule's most recent slot at or before now
// (weekday and time of day in UTC).
func LatestSlot(sc store.Schedule, now time.Time) (time.Time, error) {
	h, m, err := ParseClock(sc.At)
	if err != nil {
		return time.Time{}, err
	}
	now = now.UTC()
	slot := time.Date(now.Year(), now.Month(), now.Day(), h, m, 0, 0, time.UTC)
	slot = slot.AddDate(0, 0, -((int(now.Weekday()) - int(sc.Weekday) + 7) % 7))
	if slot.After(now) {
		slot = slot.AddDate(0, 0, -7)
	}
	return slot, nil
}

// DescribeSchedule says a schedule in words.
func DescribeSchedule(sc store.Schedule) string {
	var rule ScheduleRule
	json.Unmarshal(sc.Rule, &rule)
	what := "drafts"
	if sc.Publish {
		what = "publishes"
	}
	s := fmt.Sprintf("Every %s at %s UTC, %s a list of %s.", sc.Weekday, sc.At, what, rule.Rule.Describe())
	if !sc.Enabled {
		s = "Paused. " + s
	}
	if !sc.LastRunAt.IsZero() {
		s += fmt.Sprintf(" Last run %s: %s", sc.LastRunAt.UTC().Format("2006-01-02 15:04 UTC"), sc.LastNote)
	}
	return s
}

// KindScheduledList is the job kind of a scheduled list run.
const KindScheduledList = "scheduled_list"

// ScheduledParams are a scheduled run's parameters: the dataset, the slot
// it serves, and whether it runs late because the server was down then.
type ScheduledParams struct {
	DatasetID int64     `json:"dataset_id"`
	Slot      time.Time `json:"slot"`
	Missed    bool      `json:"missed"`
}

// ScheduledResult is what a scheduled run did: a list, or a skip and why.
type ScheduledResult struct {
	ScoreResult
	Skipped bool   `json:"skipped"`
	Note    string `json:"note"`
}

// ScheduledListJob runs a scheduled slot: it drafts (or publishes) the
// schedule's list unless nothing changed since the dataset's latest list —
// the same data version and data_through — in which case it skips and says
// so.
func ScheduledListJob(st *store.Store, cache *Histories, now func() time.Time) jobs.Func {
	return func(ctx context.Context, j jobs.Job, p *jobs.Progress) ([]byte, error) {
		var params ScheduledParams
		if err := json.Unmarshal(j.Params, &params); err != nil {
			return nil, fmt.Errorf("scheduled list job %d: params: %w", j.ID, err)
		}
		sc, err := st.ScheduleOf(ctx, params.DatasetID)
		if err != nil {
			return nil, err
		}
		d, err := st.DatasetByID(ctx, params.DatasetID)
		if err != nil {
			return nil, err
		}
		late := ""
		if params.Missed {
			late = fmt.Sprintf(" It runs late: the slot of %s was missed while the server was down.", params.Slot.UTC().Format("2006-01-02 15:04 UTC"))
		}
		var res ScheduledResult
		if prev, err := st.LatestList(ctx, d.ID); err == nil && prev.VersionID == d.Version && prev.DataThrough == d.DataThrough() {
			res.Skipped = true
			res.Note = fmt.Sprintf("Skipped: no new data since the list of %s (same dataset version %d, data through %s).%s", prev.AsOf, d.Seq, d.DataThrough(), late)
			p.Set(100, "skipped: no new data")
			return json.Marshal(res)
		} else if err != nil && !problem.Is(err, problem.NotFound) {
			return nil, err
		}
		var rule ScheduleRule
		if err := json.Unmarshal(sc.Rule, &rule); err != nil {
			return nil, fmt.Errorf("schedule of dataset %d: %w", d.ID, err)
		}
		out, err := Score(ctx, st, cache, ScoreRequest{DatasetID: d.ID, Rule: rule.Rule, Holdout: &rule.Holdout, Bands: rule.Bands,
			Publish: sc.Publish, By: j.CreatedBy, Now: now()}, p.Set)
		if err != nil {
			return nil, err
		}
		res.ScoreResult = *out
		state := "drafted"
		if out.Published {
			state = "published"
			// The outcomes now cover this list and whatever matured since.
			if _, err := Measure(ctx, st, cache, d.ID, now(), nil); err != nil {
				return nil, fmt.Errorf("measure after publishing list %d: %w", out.ListID, err)
			}
		}
		res.Note = fmt.Sprintf("List %d %s: %d selected, %d to contact.%s", out.ListID, state, out.Summary.Selected, out.Summary.Contact, late)
		return json.Marshal(res)
	}
}

// Submitter queues a job (jobs.Runner does).
type Submitter interface {
	Submit(ctx context.Context, kind string, datasetID int64, params []byte, by string) (int64, error)
}

// RunDueSchedules queues a job for every enabled schedule whose latest slot
// has not been handled: each slot once, and a slot missed while the server
// was down once at the next start (only the latest; earlier missed weeks
// are not made up). A slot more than grace old when handled is marked
// missed. Slots before the schedule was saved never run.
func RunDueSchedules(ctx context.Context, st *store.Store, q Submitter, now time.Time, grace time.Duration) (int, error) {
	scs, err := st.Schedules(ctx)
	if err != nil {
		return 0, err
	}
	n := 0
	for _, sc := range scs {
		slot, err := LatestSlot(sc, now)
		if err != nil {
			return n, err
		}
		if !slot.After(sc.LastRunAt) || slot.Before(sc.CreatedAt) {
			continue
		}
		missed := now.Sub(slot) > grace
		body, _ := json.Marshal(ScheduledParams{DatasetID: sc.DatasetID, Slot: slot, Missed: missed})
		id, err := q.Submit(ctx, KindScheduledList, sc.DatasetID, body, "schedule")
		if err != nil {
			return n, err
		}
		note := fmt.Sprintf("job %d", id)
		if missed {
			note += " (missed while the server was down; run once at start)"
		}
		if err := st.MarkScheduleRun(ctx, sc.DatasetID, slot, note); err != nil {
			return n, err
		}
		n++
	}
	return n, nil
}
