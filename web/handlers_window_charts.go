package web

import (
	"fmt"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ebb/internal/analysis"
	"ebb/internal/charts"
	"ebb/internal/gaps"
	"ebb/internal/problem"
)

// handleWindowChart draws one of the window page's charts from the latest
// stored derivation: gaps (histogram; ?log=1 for a log-scaled day axis),
// repurchase (Kaplan–Meier curve) or tradeoff (the sensitivity table).
func (s *Server) handleWindowChart(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	name, ext, _ := strings.Cut(chi.URLParam(r, "chart"), ".")
	if ext != "svg" && ext != "png" {
		s.fail(w, r, problem.New(problem.NotFound, "there is no such chart"))
		return
	}
	run, err := s.store.LatestWindowRun(r.Context(), id)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	rep, err := analysis.LoadWindowReport(run)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	chosen := 0 // the current churn definition's X, marked as the chosen one
	if defs, err := s.store.Definitions(r.Context(), id); err == nil && len(defs) > 0 {
		chosen = defs[0].WindowDays
	}
	var c chart
	switch name {
	case "gaps":
		h := gapHistogram(rep, r.URL.Query().Get("log") == "1")
		h.Markers = withChosen(h.Markers, chosen, h.Edges[len(h.Edges)-1])
		c = h
	case "repurchase":
		st := repurchaseCurve(rep)
		st.Markers = withChosen(st.Markers, chosen, st.MaxX)
		c = st
	case "tradeoff":
		l := tradeoffLines(rep)
		l.Markers = withChosen(l.Markers, chosen, float64(gaps.MaxX))
		c = l
	default:
		s.fail(w, r, problem.New(problem.NotFound, "there is no such chart"))
		return
	}
	s.sendChart(w, r, ext, fmt.Sprintf("%s-%d", name, id), c)
}

// windowMarkers marks each method's X that falls on the axis (up to
// maxX); only, if given, keeps one method.
func windowMarkers(rep *analysis.WindowReport, maxX float64, only ...gaps.Method) []charts.Marker {
	var ms []charts.Marker
	for _, wd := range rep.Windows {
		if !wd.OK || float64(wd.Days) > maxX || (len(only) > 0 && wd.Method != only[0]) {
			continue
		}
		ms = append(ms, charts.Marker{X: float64(wd.Days), Label: string(wd.Method) + " " + strconv.Itoa(wd.Days) + " d", Dashed: wd.Method != gaps.Censored})
	}
	return ms
}

// withChosen adds the current definition's X when it is on the axis.
func withChosen(ms []charts.Marker, chosen int, maxX float64) []charts.Marker {
	if chosen <= 0 || float64(chosen) > maxX {
		return ms
	}
	return append(ms, charts.Marker{X: float64(chosen), Label: "chosen X = " + strconv.Itoa(chosen) + " d"})
}

// gapHistogram bins the stored per-day gap counts. The axis reaches twice
// the longest window found (at least 60 days, at most the longest gap
// kept), so the bulk of the gaps is visible; longer gaps share the last bin.
func gapHistogram(rep *analysis.WindowReport, logX bool) charts.Histogram {
	longest := 0
	for _, wd := range rep.Windows {
		if wd.OK {
			longest = max(longest, wd.Days)
		}
	}
	maxDays := min(max(2*longest, 60), len(rep.Figures.GapCounts)-1)
	edges, counts := charts.BinDayCounts(rep.Figures.GapCounts, maxDays, logX)
	return charts.Histogram{Title: "Gaps between orders in the look-back · " + rep.Dataset, XLabel: "Days between consecutive order days",
		YLabel: "Gaps", Edges: edges, Counts: counts, LogX: logX, Markers: windowMarkers(rep, edges[len(edges)-1])}
}

func repurchaseCurve(rep *analysis.WindowReport) charts.Steps {
	c := charts.Steps{Title: "Share of gaps ended by a reorder within t days · " + rep.Dataset, XLabel: "Days since an order",
		YLabel: "Reordered", MaxX: float64(rep.Figures.CapDays), Markers: windowMarkers(rep, float64(rep.Figures.CapDays), gaps.Censored)}
	for _, p := range rep.Figures.Repurchase {
		c.X = append(c.X, p.Days)
		c.Y = append(c.Y, p.Share)
		c.Lower = append(c.Lower, p.Lower)
		c.Upper = append(c.Upper, p.Upper)
	}
	return c
}

func tradeoffLines(rep *analysis.WindowReport) charts.Lines {
	l := charts.Lines{Title: "What each X costs · " + rep.Dataset, XLabel: "X (days)", YLabel: "Share", Percent: true,
		Markers: windowMarkers(rep, float64(gaps.MaxX))}
	lapsed := charts.Series{Name: "lapsed today"}
	returned := charts.Series{Name: "returned after lapsing", Dashed: true}
	for _, row := range rep.Sensitivity {
		c := row.Cells[gaps.All]
		l.X = append(l.X, float64(row.Days))
		lapsed.Y = append(lapsed.Y, c.LapsedShare())
		returned.Y = append(returned.Y, c.ReturnShare())
	}
	l.Series = []charts.Series{lapsed, returned}
	return l
}
