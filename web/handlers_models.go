package web

import (
	"bytes"
	"encoding/json"
	"fmt"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ebb/internal/analysis"
	"ebb/internal/charts"
	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/web/views"
)

func f3(x float64) string { return strconv.FormatFloat(x, 'f', 3, 64) }

// latestReport returns the dataset's newest training report.
func (s *Server) latestReport(r *http.Request, datasetID int64) (store.TrainingRun, *analysis.TrainReport, error) {
	run, err := s.store.LatestTrainingRun(r.Context(), datasetID)
	if err != nil {
		return run, nil, err
	}
	var rep analysis.TrainReport
	if err := json.Unmarshal(run.Report, &rep); err != nil {
		return run, nil, fmt.Errorf("training run %d: %w", run.ID, err)
	}
	return run, &rep, nil
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
	stored, err := s.store.Models(r.Context(), d.ID)
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
	for _, m := range rep.Models {
		row := views.ModelRow{ID: idOf[m.Name], Name: m.Name, InUse: inUse[m.Name],
			AUC: f3(m.ROCAUC.Estimate), AUCBand: fmt.Sprintf("%s–%s", f3(m.ROCAUC.Lower), f3(m.ROCAUC.Upper)),
			AP: f3(m.AveragePrecision.Estimate), APBand: fmt.Sprintf("%s–%s", f3(m.AveragePrecision.Lower), f3(m.AveragePrecision.Upper)),
			Brier: strconv.FormatFloat(m.Brier.Estimate, 'f', 4, 64), LogLoss: f3(m.LogLoss), VsBaseline: "—",
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
		v.Models = append(v.Models, row)
	}
	s.render(w, r, http.StatusOK, views.Models(v))
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
	if (name != "roc" && name != "pr") || (ext != "svg" && ext != "png") {
		s.fail(w, r, problem.New(problem.NotFound, "there is no such chart"))
		return
	}
	_, rep, err := s.latestReport(r, id)
	if err != nil {
		s.fail(w, r, err)
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
	var buf bytes.Buffer
	if ext == "png" {
		err = c.PNG(&buf)
		w.Header().Set("Content-Type", "image/png")
	} else {
		err = c.SVG(&buf)
		w.Header().Set("Content-Type", "image/svg+xml")
		w.Header().Set("Content-Security-Policy", "default-src 'none'; style-src 'unsafe-inline'; frame-ancestors 'none'")
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	buf.WriteTo(w)
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
