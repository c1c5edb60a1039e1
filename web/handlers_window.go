package web

import (
	"encoding/json"
	"fmt"
	"net/http"
	"strconv"
	"strings"

	"ebb/internal/analysis"
	"ebb/internal/gaps"
	"ebb/internal/problem"
	"ebb/web/views"
)

var methodNames = map[gaps.Method]string{
	gaps.MeanGap:   "Mean-gap percentile",
	gaps.PooledGap: "Pooled-gap percentile",
	gaps.Censored:  "Censoring-aware (Kaplan–Meier)",
}

func methodCard(w gaps.Window) views.MethodCard {
	c := views.MethodCard{Name: methodNames[w.Method], Key: string(w.Method), OK: w.OK, Days: views.Count(w.Days),
		Sentence: w.Sentence, Reason: w.Reason}
	if w.HasBand {
		c.Band = fmt.Sprintf("%d–%d days", w.BandLow, w.BandHigh)
	}
	c.Counts = append(c.Counts, views.Count(w.CustomersUsed)+" customers used", views.Count(w.Episodes)+" gaps")
	if w.Censored > 0 {
		c.Counts = append(c.Counts, views.Count(w.Censored)+" of them still open today")
	}
	c.Counts = append(c.Counts, views.Count(w.SingleOrderCustomers)+" customers with one order day in the look-back")
	if w.OutsideLookback > 0 {
		c.Counts = append(c.Counts, views.Count(w.OutsideLookback)+" customers with no order in the look-back")
	}
	return c
}

func sensitivityRow(r gaps.Row, marked bool) views.SensitivityRow {
	all, first, rep := r.Cells[gaps.All], r.Cells[gaps.FirstTime], r.Cells[gaps.Repeat]
	wait := "—"
	if all.Returned > 0 {
		wait = strconv.FormatFloat(all.MedianExtraWait, 'f', -1, 64) + " d"
	}
	return views.SensitivityRow{Days: r.Days, Marked: marked,
		Lapsed: views.Percent(all.LapsedShare()), LapsedFirst: views.Percent(first.LapsedShare()), LapsedRepeat: views.Percent(rep.LapsedShare()),
		Returned: shareOf(all), ReturnedFirst: shareOf(first), ReturnedRepeat: shareOf(rep),
		Episodes: views.Count(all.Episodes), MedianWait: wait}
}

func shareOf(c gaps.Cell) string {
	if c.Episodes == 0 {
		return "—"
	}
	return views.Percent(c.ReturnShare())
}

// windowView builds the window page from the latest stored derivation.
func (s *Server) windowView(w http.ResponseWriter, r *http.Request, id int64) (views.WindowView, error) {
	ctx := r.Context()
	d, err := s.store.DatasetByID(ctx, id)
	if err != nil {
		return views.WindowView{}, err
	}
	v := views.WindowView{Chrome: s.chrome(w, r, "Churn window · "+d.Name, "datasets"), DatasetID: d.ID, Dataset: d.Name,
		FormPercentile: "90", FormLookback: "365"}
	defs, err := s.store.Definitions(ctx, d.ID)
	if err != nil {
		return v, err
	}
	for i, def := range defs {
		v.Definitions = append(v.Definitions, views.DefinitionRow{Seq: views.Count(def.Seq), Window: views.Count(def.WindowDays),
			Horizon: views.Count(def.HorizonDays), Method: def.Method, Rationale: def.Rationale, By: def.CreatedBy,
			At: def.CreatedAt.UTC().Format("2006-01-02 15:04 UTC"), Current: i == 0})
	}
	attrs, err := s.store.AttributeNames(ctx, d.ID)
	if err != nil {
		return v, err
	}
	v.SplitOptions = []views.Option{{Value: "", Label: "(no split)"}}
	for _, a := range attrs {
		v.SplitOptions = append(v.SplitOptions, views.Option{Value: a, Label: a})
	}
	run, err := s.store.LatestWindowRun(ctx, d.ID)
	if problem.Is(err, problem.NotFound) {
		return v, nil
	}
	if err != nil {
		return v, err
	}
	rep, err := analysis.LoadWindowReport(run)
	if err != nil {
		return v, err
	}
	o := rep.Options
	v.HasRun, v.RunID = true, run.ID
	v.RunAt = run.CreatedAt.UTC().Format("2006-01-02 15:04 UTC")
	v.Version, v.DataThrough, v.Note = views.Count(rep.Version), rep.DataThrough, rep.Note
	v.Lookback, v.Percentile, v.FollowUp = views.Count(o.LookbackDays), strconv.FormatFloat(o.Percentile, 'f', -1, 64), views.Count(o.FollowUpDays)
	v.FormPercentile, v.FormLookback = v.Percentile, strconv.Itoa(o.LookbackDays)
	for _, m := range rep.Windows {
		v.Methods = append(v.Methods, methodCard(m))
		if v.SaveDays == "" && m.OK {
			v.SaveDays, v.SaveMethod = strconv.Itoa(m.Days), string(m.Method)
		}
	}
	for _, m := range rep.SecondOrder {
		c := methodCard(m)
		c.Key = "second-" + c.Key
		v.Second = append(v.Second, c)
	}
	x, _ := strconv.Atoi(strings.TrimSpace(r.URL.Query().Get("x")))
	v.LookupDays = r.URL.Query().Get("x")
	for _, row := range rep.Sensitivity {
		sr := sensitivityRow(row, row.Days == x)
		v.Rows = append(v.Rows, sr)
		if row.Days == x {
			look := sr
			v.Lookup = &look
		}
	}
	if sp := rep.Split; sp != nil {
		at := x
		if at < 1 || at > len(sp.Cells) {
			at, _ = strconv.Atoi(v.SaveDays)
		}
		if at >= 1 && at <= len(sp.Cells) {
			for i := range v.SplitOptions {
				v.SplitOptions[i].Selected = v.SplitOptions[i].Value == sp.Attribute
			}
			v.SplitTitle = fmt.Sprintf("By %s, at X = %d days", sp.Attribute, at)
			for l, name := range sp.Levels {
				c := sp.Cells[at-1][1+l]
				wait := "—"
				if c.Returned > 0 {
					wait = strconv.FormatFloat(c.MedianExtraWait, 'f', -1, 64) + " d"
				}
				v.SplitRows = append(v.SplitRows, views.SplitRow{Level: name, Customers: views.Count(sp.Customers[l]),
					Lapsed: views.Percent(c.LapsedShare()), Returned: shareOf(c), Episodes: views.Count(c.Episodes), MedianWait: wait})
			}
		}
	}
	for _, b := range gapBuckets(rep.Figures.GapCounts) {
		v.GapRows = append(v.GapRows, [2]string{b.label, views.Count(b.count)})
	}
	for _, p := range rep.Figures.Repurchase {
		v.CurveRows = append(v.CurveRows, [2]string{strconv.FormatFloat(p.Days, 'f', -1, 64), views.Percent(p.Share)})
	}
	return v, nil
}

type bucket struct {
	label string
	count int
}

// gapBuckets groups the per-day gap counts into weeks for the table beside
// the histogram (the last bucket holds every longer gap).
func gapBuckets(counts []int) []bucket {
	var out []bucket
	for lo := 1; lo < len(counts); lo += 7 {
		hi := min(lo+6, len(counts)-1)
		n := 0
		for d := lo; d <= hi; d++ {
			n += counts[d]
		}
		label := fmt.Sprintf("%d–%d", lo, hi)
		if hi == len(counts)-1 {
			label = fmt.Sprintf("%d or more", lo)
		}
		out = append(out, bucket{label, n})
	}
	return out
}

func (s *Server) handleWindowShow(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v, err := s.windowView(w, r, id)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, views.WindowPage(v))
}

// handleWindowDerive queues a derivation with the form's percentile and
// look-back.
func (s *Server) handleWindowDerive(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	q, qerr := strconv.ParseFloat(strings.TrimSpace(r.PostFormValue("percentile")), 64)
	l, lerr := strconv.Atoi(strings.TrimSpace(r.PostFormValue("lookback")))
	opt := gaps.Options{Percentile: q, LookbackDays: l}
	msg := ""
	switch {
	case qerr != nil || !(q > 0 && q <= 100):
		msg = "The percentile must be a number above 0 and at most 100."
	case lerr != nil || l < 1 || l > 3650:
		msg = "The look-back must be a whole number of days from 1 to 3650."
	}
	if msg != "" {
		v, err := s.windowView(w, r, id)
		if err != nil {
			s.fail(w, r, err)
			return
		}
		v.FormError, v.FormPercentile, v.FormLookback = msg, r.PostFormValue("percentile"), r.PostFormValue("lookback")
		s.render(w, r, http.StatusUnprocessableEntity, views.WindowPage(v))
		return
	}
	if _, err := s.store.DatasetByID(r.Context(), id); err != nil {
		s.fail(w, r, err)
		return
	}
	body, _ := json.Marshal(analysis.WindowParams{DatasetID: id, Options: opt, SplitBy: r.PostFormValue("split")})
	jid, err := s.jobs.Submit(r.Context(), analysis.KindWindow, id, body, u.Name)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	seeOther(w, r, jobPath(jid))
}

func (s *Server) handleDefinitionSave(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	in := analysis.DefinitionInput{Method: r.PostFormValue("method"), Rationale: r.PostFormValue("rationale")}
	x, xerr := strconv.Atoi(strings.TrimSpace(r.PostFormValue("days")))
	h := 0
	var herr error
	if t := strings.TrimSpace(r.PostFormValue("horizon")); t != "" {
		h, herr = strconv.Atoi(t)
	}
	in.WindowDays, in.HorizonDays = x, h
	in.RunID, _ = strconv.ParseInt(r.PostFormValue("run"), 10, 64)
	if run, err := s.store.LatestWindowRun(r.Context(), id); err == nil && run.ID == in.RunID {
		if rep, err := analysis.LoadWindowReport(run); err == nil {
			in.Percentile, in.LookbackDays = rep.Options.Percentile, rep.Options.LookbackDays
			if m, ok := rep.Window(gaps.Method(in.Method)); ok {
				in.DerivedDays = m.Days
			}
		}
	}
	if xerr != nil {
		err = problem.New(problem.Invalid, "X must be a whole number of days")
	} else if herr != nil {
		err = problem.New(problem.Invalid, "H must be a whole number of days, or empty for X")
	} else {
		_, err = analysis.SaveDefinition(r.Context(), s.store, id, in, u.Name, s.cfg.Now())
	}
	if p := problem.As(err); p != nil && p.Kind == problem.Invalid {
		v, verr := s.windowView(w, r, id)
		if verr != nil {
			s.fail(w, r, verr)
			return
		}
		v.SaveError, v.SaveDays, v.SaveHorizon, v.SaveMethod, v.Rationale = p.Message, r.PostFormValue("days"), r.PostFormValue("horizon"), in.Method, in.Rationale
		s.render(w, r, http.StatusUnprocessableEntity, views.WindowPage(v))
		return
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.flash(w, r, fmt.Sprintf("Saved: a customer counts as lapsed after %d silent days.", x))
	seeOther(w, r, fmt.Sprintf("/datasets/%d/window#definitions", id))
}

// handleTrain queues a training run (baseline and logistic) on the
// dataset's current churn definition.
func (s *Server) handleTrain(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	if _, err := s.store.DatasetByID(r.Context(), id); err != nil {
		s.fail(w, r, err)
		return
	}
	body, err := json.Marshal(analysis.TrainParams{DatasetID: id})
	if err != nil {
		s.fail(w, r, err)
		return
	}
	jid, err := s.jobs.Submit(r.Context(), analysis.KindTrain, id, body, u.Name)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	seeOther(w, r, jobPath(jid))
}
