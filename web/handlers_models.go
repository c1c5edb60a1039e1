package web

import (
	"encoding/json"
	"fmt"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ebb/internal/analysis"
	"ebb/internal/charts"
	"ebb/internal/evaluate"
	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/web/views"
)

func f3(x float64) string { return strconv.FormatFloat(x, 'f', 3, 64) }

// latestReport returns the dataset's newest training report.
// A run never changes, so its decoded report is kept (s.reports).
func (s *Server) latestReport(r *http.Request, datasetID int64) (store.TrainingRun, *analysis.TrainReport, error) {
	id, err := s.store.LatestTrainingRunID(r.Context(), datasetID)
	if err != nil {
		return store.TrainingRun{}, nil, err
	}
	if c, ok := s.reports.get(id); ok {
		return c.run, c.rep, nil
	}
	run, err := s.store.TrainingRunByID(r.Context(), id)
	if err != nil {
		return run, nil, err
	}
	var rep analysis.TrainReport
	if err := json.Unmarshal(run.Report, &rep); err != nil {
		return run, nil, fmt.Errorf("training run %d: %w", run.ID, err)
	}
	run.Report = nil
	s.reports.put(id, cachedReport{run, &rep})
	return run, &rep, nil
}

// cachedReport is a training run with its decoded report.
type cachedReport struct {
	run store.TrainingRun
	rep *analysis.TrainReport
}

func (s *Server) handleModels(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	d, err := s.store.DatasetByID(r.Context(), id)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v := views.ModelsView{Chrome: s.chrome(w, r, "Models · "+d.Name, "datasets"), DatasetID: d.ID, Dataset: d.Name}
	run, rep, err := s.latestReport(r, d.ID)
	if problem.Is(err, problem.NotFound) {
		s.render(w, r, http.StatusOK, views.Models(v))
		return
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	stored, err := s.store.ModelsBrief(r.Context(), d.ID)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	// The report was written before its models had ids: find them by name
	// among the run's stored models.
	idOf, inUse := map[string]int64{}, map[string]bool{}
	for _, m := range stored {
		if m.RunID == run.ID {
			idOf[m.Name], inUse[m.Name] = m.ID, m.InUse
		}
	}
	v.HasRun = true
	v.RunAt = run.CreatedAt.UTC().Format("2006-01-02 15:04 UTC")
	v.Definition = fmt.Sprintf("churn definition %d (lapsed after %d silent days, labels %d days ahead), dataset version %d",
		rep.Definition, rep.WindowDays, rep.HorizonDays, rep.Version)
	v.Rows = fmt.Sprintf("Snapshot rows: %s for training, %s for validation, %s test rows evaluated, of whom %s did not order again within %d days.",
		views.Count(rep.Rows["train"]), views.Count(rep.Rows["validation"]), views.Count(rep.Rows["test_evaluated"]),
		views.Count(rep.TestPositives), rep.HorizonDays)
	if b := rep.BGNBD; b != nil {
		v.Rows += fmt.Sprintf(" The feature p_active_bgnbd uses BG/NBD fitted on orders through %s (r = %.3f, α = %.2f, a = %.3f, b = %.3f), before every snapshot date.",
			b.FittedThrough, b.Params.R, b.Params.Alpha, b.Params.A, b.Params.B)
	}
	for _, n := range rep.Notes {
		v.Rows += " " + n
	}
	v.Checks = runChecks(rep)
	for _, m := range rep.Models {
		row := views.ModelRow{ID: idOf[m.Name], Name: m.Name, InUse: inUse[m.Name],
			AUC: f3(m.ROCAUC.Estimate), AUCBand: fmt.Sprintf("%s–%s", f3(m.ROCAUC.Lower), f3(m.ROCAUC.Upper)),
			AP: f3(m.AveragePrecision.Estimate), APBand: fmt.Sprintf("%s–%s", f3(m.AveragePrecision.Lower), f3(m.AveragePrecision.Upper)),
			Brier: strconv.FormatFloat(m.Brier.Estimate, 'f', 4, 64), LogLoss: f3(m.LogLoss.Estimate), VsBaseline: "—",
			AUCFirstTime: f3(m.ROCAUCFirstTime), AUCRepeat: f3(m.ROCAUCRepeat)}
		if d := m.AUCvsBaseline; d != nil {
			row.VsBaseline = fmt.Sprintf("%+.3f (%+.3f to %+.3f)", d.Estimate, d.Lower, d.Upper)
		}
		for _, l := range m.Lists {
			row.Lists = append(row.Lists, views.ListRow{Label: l.Label, Size: strconv.FormatFloat(l.Size, 'f', 0, 64),
				Precision: views.Percent(l.Precision), Recall: views.Percent(l.Recall)})
			row.Sentences = append(row.Sentences, fmt.Sprintf("A %s list on the last test date: %s %s", l.Label, l.PrecisionSentence, l.RecallSentence))
		}
		for _, g := range m.Gains {
			row.Gains = append(row.Gains, [5]string{strconv.Itoa(g.Group), views.Count(g.Count), views.Percent(g.Rate), views.Percent(g.Gain), strconv.FormatFloat(g.Lift, 'f', 2, 64)})
		}
		for _, c := range m.Calibration {
			row.Calibration = append(row.Calibration, [4]string{fmt.Sprintf("%s–%s", f3(c.Lower), f3(c.Upper)), views.Count(c.Count),
				views.Percent(c.MeanPredicted), views.Percent(c.ObservedRate)})
		}
		for _, c := range m.Coefficients {
			row.Coefficients = append(row.Coefficients, [2]string{c.Term, strconv.FormatFloat(c.Value, 'f', 3, 64)})
		}
		for _, c := range m.Importance {
			row.Importance = append(row.Importance, [2]string{c.Term, strconv.FormatFloat(c.Value, 'f', 4, 64)})
		}
		v.Models = append(v.Models, row)
	}
	var names []string
	defaultModel := ""
	for _, m := range rep.Models {
		names = append(names, m.Name)
		if inUse[m.Name] || defaultModel == "" {
			defaultModel = m.Name
		}
	}
	v.Try = s.tryView(r, d.ID, run.ID, names, defaultModel, rep.HorizonDays)
	for _, f := range rep.Folds {
		row := []string{f.TestFrom + " to " + f.TestTo}
		for _, m := range f.Models {
			row = append(row, fmt.Sprintf("%s: ROC AUC %s, average precision %s", m.Name, f3(m.ROCAUC), f3(m.AveragePrecision)))
		}
		v.Folds = append(v.Folds, row)
	}
	for _, m := range stored {
		use := ""
		if m.InUse {
			use = "in use"
		}
		v.History = append(v.History, [5]string{views.Count(int(m.ID)), m.Name, views.Count(int(m.RunID)), f3(s.modelAUC(m)), use})
	}
	s.render(w, r, http.StatusOK, views.Models(v))
}

// runChecks are the sentences that say how far the run's figures can be
// trusted: the row cap's cost, the BG/NBD fit's cut-off and, on generated
// data, the truth bound.
func runChecks(rep *analysis.TrainReport) []string {
	var out []string
	if c := rep.CapCheck; c != nil {
		capped := fmt.Sprintf("The snapshots gave %s rows, under the cap of %s, so none were dropped.", views.Count(rep.RowsBeforeCap), views.Count(rep.MaxRows))
		if rep.RowsBeforeCap > rep.MaxRows {
			capped = fmt.Sprintf("The snapshots gave %s rows; the cap kept whole customers up to %s rows.", views.Count(rep.RowsBeforeCap), views.Count(rep.MaxRows))
		}
		out = append(out, fmt.Sprintf("Row sampling: %s Trained on a sample of half the customers (%s of %s training rows), the %s model reaches ROC AUC %s on the same test rows, against %s with all of them — sampling by customer costs %s.",
			capped, views.Count(c.SampledRows), views.Count(c.Rows), c.Model, f3(c.SampledROCAUC), f3(c.ROCAUC), aucCost(c.ROCAUC-c.SampledROCAUC)))
	}
	for _, m := range rep.Models {
		if m.Name == "bgnbd" && rep.BGNBD != nil {
			out = append(out, "The bgnbd model scores P(no order day within the horizon) from each customer's order count, last order and age alone; its parameters are refitted for every period on the orders before it, so it never sees the period it is judged on.")
		}
	}
	if rep.TruthROCAUC > 0 {
		out = append(out, fmt.Sprintf("Demo data only: the true probabilities, which know each invented customer's hidden state (whether they already left, their own order rate), reach ROC AUC %s on these test rows. No model can: the rest of the gap is what an order history cannot reveal.",
			f3(rep.TruthROCAUC)))
	}
	return out
}

// aucCost says how much ROC AUC a change costs, in words.
func aucCost(d float64) string {
	switch {
	case d <= 0:
		return "nothing here"
	case d < 0.005:
		return fmt.Sprintf("%s of ROC AUC, within noise", f3(d))
	}
	return fmt.Sprintf("%s of ROC AUC", f3(d))
}

func (s *Server) handleModelUse(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	m, err := s.store.ModelByID(r.Context(), id)
	if err == nil {
		err = s.store.UseModel(r.Context(), id)
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.flash(w, r, "Lists of this dataset now use the "+m.Name+" model.")
	seeOther(w, r, fmt.Sprintf("/datasets/%d/models", m.DatasetID))
}

// handleModelChart draws the ROC or precision–recall curves of the latest
// run's models from the stored points.
func (s *Server) handleModelChart(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	name, ext, _ := strings.Cut(chi.URLParam(r, "chart"), ".")
	kind, modelName, _ := strings.Cut(name, "-")
	if (kind != "roc" && kind != "pr" && kind != "value" && kind != "calibration" && kind != "scores") || (ext != "svg" && ext != "png") {
		s.fail(w, r, problem.New(problem.NotFound, "there is no such chart"))
		return
	}
	run, rep, err := s.latestReport(r, id)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	if name == "value" {
		s.valueChart(w, r, run.ID, rep, ext)
		return
	}
	if kind == "calibration" || kind == "scores" {
		var mr *analysis.ModelReport
		for i := range rep.Models {
			if rep.Models[i].Name == modelName {
				mr = &rep.Models[i]
			}
		}
		if mr == nil {
			s.fail(w, r, problem.New(problem.NotFound, "there is no model %q in the latest run", modelName))
			return
		}
		s.sendChart(w, r, ext, name, modelChart(kind, mr))
		return
	}
	// Lines need one x for every series; each model's curve is drawn on
	// its own x by interpolating on a common grid of 101 points.
	grid := make([]float64, 101)
	for i := range grid {
		grid[i] = float64(i) / 100
	}
	c := charts.Lines{X: grid, Percent: true}
	if name == "roc" {
		c.Title, c.XLabel, c.YLabel = "ROC curves · "+rep.Dataset, "Share of customers who ordered again that were flagged", "Share of lapsing customers flagged"
	} else {
		c.Title, c.XLabel, c.YLabel = "Precision and recall · "+rep.Dataset, "Recall", "Precision"
	}
	for _, m := range rep.Models {
		pts := m.ROC
		if name == "pr" {
			pts = m.PR
		}
		c.Series = append(c.Series, charts.Series{Name: m.Name, Y: interpolate(pts, grid), Dashed: m.Name == "baseline"})
	}
	s.sendChart(w, r, ext, name, c)
}

// interpolate reads a curve given as (x, y) points with x ascending or
// descending at each grid x, linearly between points and flat beyond.
func interpolate(pts [][2]float64, grid []float64) []float64 {
	out := make([]float64, len(grid))
	if len(pts) == 0 {
		return out
	}
	sorted := append([][2]float64(nil), pts...)
	if sorted[0][0] > sorted[len(sorted)-1][0] {
		for i, j := 0, len(sorted)-1; i < j; i, j = i+1, j-1 {
			sorted[i], sorted[j] = sorted[j], sorted[i]
		}
	}
	k := 0
	for i, x := range grid {
		for k+1 < len(sorted) && sorted[k+1][0] < x {
			k++
		}
		switch {
		case x <= sorted[0][0]:
			out[i] = sorted[0][1]
		case k+1 >= len(sorted):
			out[i] = sorted[len(sorted)-1][1]
		default:
			a, b := sorted[k], sorted[k+1]
			if b[0] == a[0] {
				out[i] = b[1]
			} else {
				out[i] = a[1] + (x-a[0])/(b[0]-a[0])*(b[1]-a[1])
			}
		}
	}
	return out
}

// tryForm reads the "try a list" fields, with defaults.
type tryForm struct {
	model                   string
	k                       int
	threshold               float64
	hasK, hasThreshold      bool
	value                   analysis.Value
	kText, tText            string
	costText, valText, save string
}

func parseTry(r *http.Request, defaultModel string) (tryForm, error) {
	q := r.URL.Query()
	f := tryForm{model: q.Get("model"), kText: q.Get("k"), tText: q.Get("threshold"),
		costText: q.Get("cost"), valText: q.Get("value"), save: q.Get("save")}
	if f.model == "" {
		f.model = defaultModel
	}
	if f.costText == "" {
		f.costText = "2"
	}
	if f.valText == "" {
		f.valText = "40"
	}
	if f.save == "" {
		f.save = "0.1"
	}
	var err1, err2, err3 error
	f.value.CostPerContact, err1 = strconv.ParseFloat(f.costText, 64)
	f.value.KeptValue, err2 = strconv.ParseFloat(f.valText, 64)
	f.value.SaveRate, err3 = strconv.ParseFloat(f.save, 64)
	if err1 != nil || err2 != nil || err3 != nil {
		return f, problem.New(problem.Invalid, "cost, value and save rate must be numbers")
	}
	if err := f.value.Check(); err != nil {
		return f, err
	}
	if f.kText != "" {
		k, err := strconv.Atoi(strings.TrimSpace(f.kText))
		if err != nil || k < 1 {
			return f, problem.New(problem.Invalid, "the list size must be a whole number of customers, at least 1")
		}
		f.k, f.hasK = k, true
	}
	if f.tText != "" {
		t, err := numberIn(f.tText, "the probability threshold", 0, 1)
		if err != nil {
			return f, err
		}
		f.threshold, f.hasThreshold = t, true
	}
	return f, nil
}

// rankings returns a run's decoded rankings of one model by test date
// (kept: a run never changes).
func (s *Server) rankings(r *http.Request, runID int64, model string) ([]analysis.Ranked, error) {
	key := rankKey{runID, model}
	if d, ok := s.ranked.get(key); ok {
		return d, nil
	}
	lists, err := s.store.RankedLists(r.Context(), runID, model)
	if err != nil {
		return nil, err
	}
	var dates []analysis.Ranked
	for _, l := range lists {
		rk, err := analysis.DecodeRanked(l.Data)
		if err != nil {
			s.log.Warn("decode ranked list", "run", runID, "model", model, "err", err)
			return nil, err
		}
		dates = append(dates, rk)
	}
	s.ranked.put(key, dates)
	return dates, nil
}

// rankKey names a run's rankings of one model.
type rankKey struct {
	run   int64
	model string
}

// modelAUC returns a stored model's test ROC AUC from its summary (kept:
// a model never changes).
func (s *Server) modelAUC(m store.StoredModel) float64 {
	if a, ok := s.aucs.get(m.ID); ok {
		return a
	}
	var sum struct {
		ROCAUC struct{ Estimate float64 } `json:"roc_auc"`
	}
	json.Unmarshal(m.Summary, &sum)
	s.aucs.put(m.ID, sum.ROCAUC.Estimate)
	return sum.ROCAUC.Estimate
}

// tryView answers the "try a list" questions from the stored rankings.
func (s *Server) tryView(r *http.Request, datasetID, runID int64, names []string, defaultModel string, horizon int) views.TryView {
	f, err := parseTry(r, defaultModel)
	v := views.TryView{K: f.kText, Threshold: f.tText, Cost: f.costText, Value: f.valText, Save: f.save}
	for _, n := range names {
		v.ModelOptions = append(v.ModelOptions, views.Option{Value: n, Label: n, Selected: n == f.model})
	}
	if err != nil {
		v.Error, _ = problem.Message(err)
		return v
	}
	dates, err := s.rankings(r, runID, f.model)
	if err != nil || len(dates) == 0 {
		return v
	}
	describe := func(what string, size func(analysis.Ranked) int) {
		var ls []evaluate.List
		for _, d := range dates {
			ls = append(ls, d.ListAt(size(d)))
		}
		avg, err := evaluate.AverageLists(ls)
		if err != nil {
			return
		}
		last := ls[len(ls)-1]
		v.Answers = append(v.Answers, fmt.Sprintf("%s: on average %s customers per date, precision %s, recall %s. On the last test date: %s %s",
			what, strconv.FormatFloat(avg.MeanSize, 'f', 0, 64), views.Percent(avg.MeanPrecision), views.Percent(avg.MeanRecall),
			evaluate.PrecisionSentence(last.Size, last.Positives, horizon), evaluate.RecallSentence(last.AllPositives, last.Positives)))
	}
	if f.hasK {
		describe(fmt.Sprintf("The %d highest-risk customers", f.k), func(analysis.Ranked) int { return f.k })
	}
	if f.hasThreshold {
		describe(fmt.Sprintf("Everyone at or above %s", strconv.FormatFloat(f.threshold, 'f', -1, 64)), func(d analysis.Ranked) int { return d.Above(f.threshold) })
	}
	_, best := analysis.ExpectedValue(dates, f.value)
	v.Answers = append(v.Answers, fmt.Sprintf("With a contact costing %s, a kept customer worth %s and %s of contacted would-be lapsers kept, the best list is the top %s of customers, worth %s per list on average.",
		f.costText, f.valText, views.Percent(f.value.SaveRate), views.Percent(best.Share), strconv.FormatFloat(best.Value, 'f', 0, 64)))
	v.ValueChart = fmt.Sprintf("/datasets/%d/models/value.svg?model=%s&cost=%s&value=%s&save=%s", datasetID,
		urlQueryEscape(f.model), urlQueryEscape(f.costText), urlQueryEscape(f.valText), urlQueryEscape(f.save))
	return v
}

// valueChart draws the expected value of a list against its size.
func (s *Server) valueChart(w http.ResponseWriter, r *http.Request, runID int64, rep *analysis.TrainReport, ext string) {
	f, err := parseTry(r, "")
	if err != nil || f.model == "" {
		s.fail(w, r, problem.New(problem.Invalid, "the chart needs a model and valid assumptions"))
		return
	}
	lists, err := s.store.RankedLists(r.Context(), runID, f.model)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	var dates []analysis.Ranked
	for _, l := range lists {
		rk, err := analysis.DecodeRanked(l.Data)
		if err != nil {
			s.fail(w, r, err)
			return
		}
		dates = append(dates, rk)
	}
	if len(dates) == 0 {
		s.fail(w, r, problem.New(problem.NotFound, "there is no stored ranking of model %q", f.model))
		return
	}
	pts, best := analysis.ExpectedValue(dates, f.value)
	c := charts.Lines{Title: "Expected value of a list · " + f.model, XLabel: "List size (share of customers scored, %)", YLabel: "Value per list"}
	ser := charts.Series{Name: "expected value"}
	for _, p := range pts {
		c.X = append(c.X, 100*p.Share)
		ser.Y = append(ser.Y, p.Value)
	}
	c.Series = []charts.Series{ser}
	c.Markers = []charts.Marker{{X: 100 * best.Share, Label: "best: top " + strconv.FormatFloat(100*best.Share, 'f', 0, 64) + "%"}}
	s.sendChart(w, r, ext, "expected-value-"+f.model, c)
}

// modelChart draws one model's calibration (observed against predicted,
// with the diagonal) or its score distributions by outcome.
func modelChart(kind string, m *analysis.ModelReport) charts.Lines {
	if kind == "calibration" {
		c := charts.Lines{Title: "Calibration · " + m.Name, XLabel: "Mean predicted probability", YLabel: "Observed share", Percent: true}
		obs := charts.Series{Name: "observed"}
		diag := charts.Series{Name: "perfect calibration", Dashed: true}
		for _, b := range m.Calibration {
			c.X = append(c.X, b.MeanPredicted)
			obs.Y = append(obs.Y, b.ObservedRate)
			diag.Y = append(diag.Y, b.MeanPredicted)
		}
		c.Series = []charts.Series{obs, diag}
		return c
	}
	c := charts.Lines{Title: "Scores by outcome · " + m.Name, XLabel: "Calibrated probability of not ordering again", YLabel: "Share of the group", Percent: true}
	lapsed := charts.Series{Name: "did not order again"}
	returned := charts.Series{Name: "ordered again", Dashed: true}
	nl, nr := 0, 0
	for i := range m.ScoreLapsed {
		nl += m.ScoreLapsed[i]
		nr += m.ScoreReturned[i]
	}
	for i := range m.ScoreLapsed {
		c.X = append(c.X, (float64(i)+0.5)/20)
		lapsed.Y = append(lapsed.Y, float64(m.ScoreLapsed[i])/float64(max(nl, 1)))
		returned.Y = append(returned.Y, float64(m.ScoreReturned[i])/float64(max(nr, 1)))
	}
	c.Series = []charts.Series{lapsed, returned}
	return c
}

// handleTestRows sends the latest training run's evaluated test rows.
func (s *Server) handleTestRows(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	runID, err := s.store.LatestTrainingRunID(r.Context(), id)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	b, err := s.store.TestRows(r.Context(), runID)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	w.Header().Set("Content-Disposition", fmt.Sprintf(`attachment; filename="test-rows-run-%d.csv"`, runID))
	w.Write(b)
}
