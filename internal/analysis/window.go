package analysis

import (
	"context"
	"encoding/json"
	"fmt"
	"slices"
	"strings"
	"time"

	"ebb/internal/gaps"
	"ebb/internal/history"
	"ebb/internal/jobs"
	"ebb/internal/problem"
	"ebb/internal/store"
)

// KindWindow is the job kind of a churn-window derivation.
const KindWindow = "window"

// WindowReport is everything a derivation found, stored as one document.
type WindowReport struct {
	DatasetID   int64         `json:"dataset_id"`
	Dataset     string        `json:"dataset"`
	VersionID   int64         `json:"version_id"`
	Version     int           `json:"version"`
	DataThrough string        `json:"data_through"`
	FirstDay    string        `json:"first_day"`
	Options     gaps.Options  `json:"options"`
	Windows     []gaps.Window `json:"windows"`
	SecondOrder []gaps.Window `json:"second_order"`
	Figures     gaps.Figures  `json:"figures"`
	Sensitivity []gaps.Row    `json:"sensitivity"`
	// Note says when the look-back reaches before the first order.
	Note string `json:"note,omitempty"`
	// Split is the sensitivity table by one customer attribute, if asked.
	Split *AttributeSplit `json:"split,omitempty"`
}

// AttributeSplit is the sensitivity table by the levels of one attribute.
type AttributeSplit struct {
	Attribute string   `json:"attribute"`
	Levels    []string `json:"levels"`
	Customers []int    `json:"customers"` // per level
	// Cells[x−1][0] is every customer, Cells[x−1][1+l] level l.
	Cells [][]gaps.Cell `json:"cells"`
}

// MinLevelCustomers is the fewest customers a level of a split needs to be
// shown on its own; smaller levels are pooled as "other" (common practice:
// shares of a handful of customers mislead).
const MinLevelCustomers = 30

// maxLevels bounds the levels of a split shown on their own.
const maxLevels = 10

// Window returns the report's window of one method.
func (r *WindowReport) Window(m gaps.Method) (gaps.Window, bool) {
	for _, w := range r.Windows {
		if w.Method == m {
			return w, true
		}
	}
	return gaps.Window{}, false
}

// Row returns the sensitivity row of x days (1 ≤ x ≤ gaps.MaxX).
func (r *WindowReport) Row(x int) (gaps.Row, bool) {
	if x < 1 || x > len(r.Sensitivity) {
		return gaps.Row{}, false
	}
	return r.Sensitivity[x-1], true
}

// WindowParams are a window job's parameters.
type WindowParams struct {
	DatasetID int64        `json:"dataset_id"`
	Options   gaps.Options `json:"options"`
	SplitBy   string       `json:"split_by,omitempty"` // a customer attribute, or ""
}

// Histories is the shared cache of loaded order histories.
type Histories = history.Cache

// loadHistory returns the dataset's current version as a history, through
// the cache, with the dataset's current data_through.
func loadHistory(ctx context.Context, st *store.Store, cache *Histories, d store.Dataset) (*history.History, error) {
	h, err := cache.Get(ctx, d.Version, func(ctx context.Context) (*history.History, error) {
		return st.LoadHistory(ctx, d.Version)
	})
	if err != nil {
		return nil, err
	}
	if h.DataThrough() != d.DataThrough() {
		h = h.WithDataThrough(d.DataThrough())
	}
	return h, nil
}

// DeriveWindow runs every window method and the sensitivity table on the
// dataset's current version and stores the report; it returns the run id.
func DeriveWindow(ctx context.Context, st *store.Store, cache *Histories, datasetID int64, opt gaps.Options, splitBy string, by string, now time.Time,
	progress func(pct float64, note string)) (int64, *WindowReport, error) {
	if progress == nil {
		progress = func(float64, string) {}
	}
	d, err := st.DatasetByID(ctx, datasetID)
	if err != nil {
		return 0, nil, err
	}
	progress(5, "loading the order history")
	h, err := loadHistory(ctx, st, cache, d)
	if err != nil {
		return 0, nil, err
	}
	opt = opt.Resolved()
	if opt.Seed == 0 {
		opt.Seed = uint64(d.ID)
	}
	rep := &WindowReport{DatasetID: d.ID, Dataset: d.Name, VersionID: d.Version, Version: d.Seq,
		DataThrough: h.DataThrough().String(), FirstDay: h.First().String()}
	progress(25, "deriving the window by each method")
	if rep.Windows, err = gaps.Derive(h, opt); err != nil {
		return 0, nil, err
	}
	if rep.SecondOrder, err = gaps.DeriveSecondOrder(h, opt); err != nil {
		return 0, nil, err
	}
	if err := ctx.Err(); err != nil {
		return 0, nil, err
	}
	progress(60, "computing the sensitivity table")
	rep.Options = opt
	lookback := opt.LookbackDays
	rep.Sensitivity = gaps.Sensitivity(h, lookback, opt.FollowUpDays)
	if rep.Figures, err = gaps.Chart(h, opt); err != nil {
		return 0, nil, err
	}
	if splitBy != "" {
		progress(75, "splitting the table by "+splitBy)
		values, err := st.CustomerAttribute(ctx, d.ID, splitBy, h.Customers())
		if err != nil {
			return 0, nil, err
		}
		split, level := levelsOf(splitBy, values)
		if len(split.Levels) == 0 {
			return 0, nil, problem.New(problem.Invalid, "no customer has a value of the attribute %q", splitBy)
		}
		split.Cells = gaps.SensitivityBy(h, lookback, opt.FollowUpDays, level, len(split.Levels))
		rep.Split = split
	}
	if span := int(h.DataThrough() - h.First()); span < lookback {
		rep.Note = fmt.Sprintf("The look-back of %d days reaches before the first order (%s): the data cover only %d days.", lookback, h.First(), span+1)
	}
	progress(90, "saving")
	optJSON, _ := json.Marshal(opt)
	repJSON, err := json.Marshal(rep)
	if err != nil {
		return 0, nil, fmt.Errorf("encode window report: %w", err)
	}
	id, err := st.InsertWindowRun(ctx, store.WindowRun{DatasetID: d.ID, VersionID: d.Version, DataThrough: rep.DataThrough,
		Options: optJSON, Report: repJSON, CreatedBy: by, CreatedAt: now})
	if err != nil {
		return 0, nil, err
	}
	progress(100, "done")
	return id, rep, nil
}

// WindowJobResult is a window job's result.
type WindowJobResult struct {
	DatasetID int64 `json:"dataset_id"`
	RunID     int64 `json:"run_id"`
}

// WindowJob returns the job function that derives a dataset's window.
func WindowJob(st *store.Store, cache *Histories, now func() time.Time) jobs.Func {
	return func(ctx context.Context, j jobs.Job, p *jobs.Progress) ([]byte, error) {
		var params WindowParams
		if err := json.Unmarshal(j.Params, &params); err != nil {
			return nil, fmt.Errorf("window job %d: params: %w", j.ID, err)
		}
		id, _, err := DeriveWindow(ctx, st, cache, params.DatasetID, params.Options, params.SplitBy, j.CreatedBy, now(), p.Set)
		if err != nil {
			return nil, err
		}
		return json.Marshal(WindowJobResult{DatasetID: params.DatasetID, RunID: id})
	}
}

// LoadWindowReport returns a stored derivation's report.
func LoadWindowReport(run store.WindowRun) (*WindowReport, error) {
	var rep WindowReport
	if err := json.Unmarshal(run.Report, &rep); err != nil {
		return nil, fmt.Errorf("window run %d: %w", run.ID, err)
	}
	return &rep, nil
}

// DefinitionInput is what an analyst saves.
type DefinitionInput struct {
	WindowDays   int
	HorizonDays  int // 0 = X
	Method       string
	Percentile   float64
	LookbackDays int
	DerivedDays  int
	RunID        int64
	Rationale    string
}

// DefinitionStore is what SaveDefinition needs from storage.
type DefinitionStore interface {
	DatasetByID(ctx context.Context, id int64) (store.Dataset, error)
	InsertDefinition(ctx context.Context, d store.Definition) (store.Definition, error)
}

// SaveDefinition validates and saves a churn definition for the dataset's
// current version; it becomes the current definition.
func SaveDefinition(ctx context.Context, st DefinitionStore, datasetID int64, in DefinitionInput, by string, now time.Time) (store.Definition, error) {
	d, err := st.DatasetByID(ctx, datasetID)
	if err != nil {
		return store.Definition{}, err
	}
	if in.HorizonDays == 0 {
		in.HorizonDays = in.WindowDays
	}
	in.Rationale = strings.TrimSpace(in.Rationale)
	switch {
	case in.WindowDays < 1 || in.WindowDays > 3650:
		return store.Definition{}, problem.New(problem.Invalid, "the churn window X must be 1 to 3650 days")
	case in.HorizonDays < 1 || in.HorizonDays > 3650:
		return store.Definition{}, problem.New(problem.Invalid, "the horizon H must be 1 to 3650 days")
	case in.Rationale == "":
		return store.Definition{}, problem.New(problem.Invalid, "say in a sentence why this window: the rationale is what you will show when asked")
	case len(in.Rationale) > 2000:
		return store.Definition{}, problem.New(problem.Invalid, "the rationale may have at most 2000 characters")
	}
	if _, err := gaps.ParseMethod(in.Method); err != nil && in.Method != "" {
		return store.Definition{}, err
	}
	if in.Method == "" {
		in.Method = "chosen"
	}
	return st.InsertDefinition(ctx, store.Definition{DatasetID: d.ID, WindowDays: in.WindowDays, HorizonDays: in.HorizonDays,
		Method: in.Method, Percentile: in.Percentile, LookbackDays: in.LookbackDays, DerivedDays: in.DerivedDays, RunID: in.RunID,
		VersionID: d.Version, Rationale: in.Rationale, CreatedBy: by, CreatedAt: now})
}

// levelsOf maps attribute values to levels: the most common first, at most
// maxLevels of them with MinLevelCustomers each, the rest pooled as
// "other"; customers without a value get −1.
func levelsOf(name string, values []string) (*AttributeSplit, []int32) {
	counts := map[string]int{}
	for _, v := range values {
		if v != "" {
			counts[v]++
		}
	}
	type lv struct {
		v string
		n int
	}
	var ls []lv
	for v, n := range counts {
		ls = append(ls, lv{v, n})
	}
	slices.SortFunc(ls, func(a, b lv) int {
		if a.n != b.n {
			return b.n - a.n
		}
		return strings.Compare(a.v, b.v)
	})
	split := &AttributeSplit{Attribute: name}
	index := map[string]int32{}
	other := int32(-1)
	for _, l := range ls {
		if l.n >= MinLevelCustomers && len(split.Levels) < maxLevels {
			index[l.v] = int32(len(split.Levels))
			split.Levels = append(split.Levels, l.v)
			split.Customers = append(split.Customers, l.n)
			continue
		}
		if other < 0 {
			other = -2 // assigned after the named levels
		}
	}
	if other == -2 {
		other = int32(len(split.Levels))
		split.Levels = append(split.Levels, "other")
		split.Customers = append(split.Customers, 0)
	}
	level := make([]int32, len(values))
	for c, v := range values {
		switch i, ok := index[v]; {
		case v == "":
			level[c] = -1
		case ok:
			level[c] = i
		default:
			level[c] = other
			split.Customers[other]++
		}
	}
	return split, level
}
