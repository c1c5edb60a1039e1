package charts

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/recorder"
)

// cohortCurves are two survival curves by hand: the first with a band,
// the second a young cohort observed for 6 days only.
func cohortCurves() Curves {
	return Curves{
		Title: "Still without a second order", XLabel: "Days since first order", YLabel: "Share",
		Series: []StepSeries{
			{Name: "2024-01", X: []float64{2, 5}, Y: []float64{0.75, 0.5}, Start: 1,
				Lower: []float64{0.7, 0.4321}, Upper: []float64{0.8, 0.6}},
			{Name: "2024-02", X: []float64{1, 4}, Y: []float64{0.9, 0.625}, Start: 1, End: 6},
		},
		MaxX: 10,
	}
}

// Each curve is drawn through the corners of its steps up to its End in
// its own colour and dashes, its band is filled in its colour made
// translucent, and the legend shows each name beside a sample of its line.
func TestCurvesPlotTheCurves(t *testing.T) {
	tests := []struct {
		name    string
		cv      Curves
		maxX    float64
		corners [][]xy // per series
		bands   [][]xy // per series; nil: no band
		xTicks  []string
	}{
		{
			name: "cohorts",
			cv:   cohortCurves(),
			maxX: 10,
			corners: [][]xy{
				{{0, 1}, {2, 1}, {2, 0.75}, {5, 0.75}, {5, 0.5}, {10, 0.5}},
				{{0, 1}, {1, 1}, {1, 0.9}, {4, 0.9}, {4, 0.625}, {6, 0.625}}, // stops at End 6
			},
			bands: [][]xy{
				{
					{0, 1}, {2, 1}, {2, 0.8}, {5, 0.8}, {5, 0.6}, {10, 0.6}, // upper
					{10, 0.4321}, {5, 0.4321}, {5, 0.7}, {2, 0.7}, {2, 1}, {0, 1}, // lower, backwards
				},
				nil,
			},
			xTicks: []string{"0", "2", "4", "6", "8", "10"},
		},
		{
			// MaxX 0: the largest last x or End, here End 8 of the second.
			name: "MaxX from the series",
			cv: Curves{Title: "S", Series: []StepSeries{
				{Name: "a", X: []float64{0, 3}, Y: []float64{0.5, 0.25}},
				{Name: "b", X: []float64{2}, Y: []float64{0.4}, End: 8},
				{Name: "c", Start: 0.3},
			}},
			maxX: 8,
			corners: [][]xy{
				{{0, 0}, {0, 0.5}, {3, 0.5}, {3, 0.25}, {8, 0.25}},
				{{0, 0}, {2, 0}, {2, 0.4}, {8, 0.4}},
				{{0, 0.3}, {8, 0.3}},
			},
			bands:  [][]xy{nil, nil, nil},
			xTicks: []string{"0", "1", "2", "3", "4", "5", "6", "7", "8"},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p, err := tt.cv.plot()
			if err != nil {
				t.Fatal(err)
			}
			w, h := chartSize(tt.cv.Width, tt.cv.Height)
			tr := trace(t, p, w, h)
			canvas := func(pts []xy) []vg.Point {
				out := make([]vg.Point, len(pts))
				for i, p := range pts {
					out[i] = tr.at(0, tt.maxX, 0, 1, p.x, p.y)
				}
				return out
			}
			for i, s := range tt.cv.Series {
				style := curveStyle(i)
				strokes := tr.stroked(style.Color)
				if len(strokes) != 2 {
					t.Fatalf("series %q: drew %d lines in its colour, want the curve and its legend sample", s.Name, len(strokes))
				}
				if want := canvas(tt.corners[i]); !samePoints(strokes[0].pts, want) {
					t.Errorf("series %q drawn through\n%s\nwant\n%s", s.Name, fmtPoints(strokes[0].pts), fmtPoints(want))
				}
				for _, st := range strokes {
					if st.width != curveWidth || !slices.Equal(st.dashes, curveDashes[i]) {
						t.Errorf("series %q drawn %v wide with dashes %v, want %v and %v", s.Name, st.width, st.dashes, curveWidth, curveDashes[i])
					}
				}
				name, ok := tr.drew(s.Name)
				if !ok {
					t.Errorf("legend entry %q not drawn", s.Name)
				} else if sample := strokes[1].pts; len(sample) != 2 || !near(sample[1].X+markerGap, name.at.X) {
					t.Errorf("legend sample of %q is %s, want a line ending %v before x = %v", s.Name, fmtPoints(sample), markerGap, name.at.X)
				}

				bands := tr.filled(curveBandColor(i))
				switch {
				case tt.bands[i] == nil && len(bands) != 0:
					t.Errorf("series %q: drew %d bands, want none", s.Name, len(bands))
				case tt.bands[i] != nil && len(bands) != 1:
					t.Errorf("series %q: drew %d bands, want 1", s.Name, len(bands))
				case tt.bands[i] != nil:
					if want := canvas(tt.bands[i]); !samePoints(bands[0].pts, want) {
						t.Errorf("band of %q drawn through\n%s\nwant\n%s", s.Name, fmtPoints(bands[0].pts), fmtPoints(want))
					}
				}
			}
			if got, want := tickLabels(p.Y), []string{"0%", "25%", "50%", "75%", "100%"}; !slices.Equal(got, want) {
				t.Errorf("y tick labels = %q, want %q", got, want)
			}
			if got := tickLabels(p.X); !slices.Equal(got, tt.xTicks) {
				t.Errorf("x tick labels = %q, want %q", got, tt.xTicks)
			}
			if p.X.Min != 0 || p.X.Max != tt.maxX || p.Y.Min != 0 || p.Y.Max != 1 {
				t.Errorf("axes %v…%v × %v…%v, want 0…%v × 0…1", p.X.Min, p.X.Max, p.Y.Min, p.Y.Max, tt.maxX)
			}
		})
	}
}

// Bands are translucent and under every curve: all bands are drawn before
// the first curve.
func TestCurvesBandsUnderCurves(t *testing.T) {
	cv := cohortCurves()
	cv.Series[1].Lower, cv.Series[1].Upper = []float64{0.8, 0.5}, []float64{0.95, 0.7}
	p, err := cv.plot()
	if err != nil {
		t.Fatal(err)
	}
	for i := range cv.Series {
		if _, _, _, a := curveBandColor(i).RGBA(); a == 0 || a == 0xffff {
			t.Errorf("band %d has alpha %#x, want translucent", i, a)
		}
	}
	// Replay the drawing and note the order of band fills and curve
	// strokes.
	bandColors, curveColors := map[color.Color]bool{}, map[color.Color]bool{}
	for i := range cv.Series {
		bandColors[curveBandColor(i)], curveColors[curveStyle(i).Color] = true, true
	}
	rec := &recorder.Canvas{}
	p.Draw(frame(draw.NewCanvas(rec, DefaultWidth, DefaultHeight)))
	var cur color.Color
	lastBand, firstCurve, bands := -1, -1, 0
	for j, a := range rec.Actions {
		switch a := a.(type) {
		case *recorder.SetColor:
			cur = a.Color
		case *recorder.Fill:
			if bandColors[cur] {
				lastBand = j
				bands++
			}
		case *recorder.Stroke:
			if curveColors[cur] && firstCurve < 0 {
				firstCurve = j
			}
		}
	}
	if bands != len(cv.Series) || firstCurve < 0 || lastBand > firstCurve {
		t.Errorf("filled %d bands, the last as action %d; first curve stroked as action %d: want %d bands, all before every curve",
			bands, lastBand, firstCurve, len(cv.Series))
	}
}

// With eight series, the most allowed, no two share both colour and dashes.
func TestCurveStylesDiffer(t *testing.T) {
	type look struct {
		color  color.Color
		dashes string
	}
	seen := map[look]int{}
	for i := range maxCurves {
		st := curveStyle(i)
		l := look{st.Color, fmt.Sprint(st.Dashes)}
		if j, ok := seen[l]; ok {
			t.Errorf("series %d and %d both %v with dashes %s", j, i, l.color, l.dashes)
		}
		seen[l] = i
	}
}

func TestCurvesPoints(t *testing.T) {
	tests := []struct {
		name string
		cv   Curves
		want []float64
	}{
		{"given", Curves{MaxX: 365, At: []float64{30, 90, 365}}, []float64{30, 90, 365}},
		// 365/8 = 45.6 → step 50.
		{"the x ticks above 0", Curves{MaxX: 365}, []float64{50, 100, 150, 200, 250, 300, 350}},
		{"MaxX from the series", Curves{Series: []StepSeries{{X: []float64{3}, Y: []float64{1}}}}, []float64{0.5, 1, 1.5, 2, 2.5, 3}},
		{"no MaxX", Curves{}, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tt.cv.Points(); !slices.Equal(got, tt.want) {
				t.Errorf("Points() = %v, want %v", got, tt.want)
			}
		})
	}
}

func TestCurvesRows(t *testing.T) {
	at := func(cv Curves, pts ...float64) Curves { cv.At = pts; return cv }
	tests := []struct {
		name string
		cv   Curves
		want []SeriesRow
	}{
		{
			// x = 1 is before the first step of 2024-01 (Start, a band
			// Start wide) and on the first of 2024-02; 5 is on a step; 7
			// is past 2024-02's End 6.
			name: "at given points",
			cv:   at(cohortCurves(), 1, 3, 5, 7),
			want: []SeriesRow{
				{Label: "2024-01", Values: []float64{1, 0.75, 0.5, 0.5},
					Texts: []string{"100% (100%–100%)", "75% (70%–80%)", "50% (43.2%–60%)", "50% (43.2%–60%)"}},
				{Label: "2024-02", Values: []float64{0.9, 0.9, 0.625, nan},
					Texts: []string{"90%", "90%", "62.5%", ""}},
			},
		},
		{
			// MaxX 10: ticks every 2 (10/8 = 1.25 → 2).
			name: "at the x ticks",
			cv:   cohortCurves(),
			want: []SeriesRow{
				{Label: "2024-01", Values: []float64{0.75, 0.75, 0.5, 0.5, 0.5},
					Texts: []string{"75% (70%–80%)", "75% (70%–80%)", "50% (43.2%–60%)", "50% (43.2%–60%)", "50% (43.2%–60%)"}},
				{Label: "2024-02", Values: []float64{0.9, 0.625, 0.625, nan, nan},
					Texts: []string{"90%", "62.5%", "62.5%", "", ""}},
			},
		},
		{name: "no series", cv: Curves{MaxX: 10}, want: []SeriesRow{}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := tt.cv.Rows()
			same := slices.EqualFunc(got, tt.want, func(a, b SeriesRow) bool {
				return a.Label == b.Label && slices.Equal(a.Texts, b.Texts) &&
					slices.EqualFunc(a.Values, b.Values, func(x, y float64) bool { return x == y || math.IsNaN(x) && math.IsNaN(y) })
			})
			if !same {
				t.Errorf("Rows() = %+v, want %+v", got, tt.want)
			}
		})
	}
}

func TestCurvesRefuseBadCurves(t *testing.T) {
	x, y := []float64{1, 2}, []float64{0.9, 0.8}
	ok := StepSeries{Name: "ok", X: x, Y: y, Start: 1}
	with := func(s StepSeries) Curves { return Curves{Title: "S", Series: []StepSeries{ok, s}, MaxX: 3} }
	nine := Curves{Title: "S", MaxX: 3}
	for i := range 9 {
		nine.Series = append(nine.Series, StepSeries{Name: fmt.Sprint(i), X: x, Y: y})
	}
	tests := []struct {
		name string
		cv   Curves
		want string
	}{
		{"nine series", nine, `curve chart "S": 9 series, at most 8 can be told apart`},
		{"fewer y than x", with(StepSeries{Name: "b", X: x, Y: y[:1]}),
			`curve chart "S": series "b": 2 x values for 1 y values`},
		{"half a band", with(StepSeries{Name: "b", X: x, Y: y, Upper: y}),
			`curve chart "S": series "b": a band needs both Lower and Upper`},
		{"short band", with(StepSeries{Name: "b", X: x, Y: y, Lower: y[:1], Upper: y}),
			`curve chart "S": series "b": band of 1 lower and 2 upper values for 2 x values`},
		{"x not ascending", with(StepSeries{Name: "b", X: []float64{2, 2}, Y: y}),
			`curve chart "S": series "b": x 1 (2) is not above x 0 (2)`},
		{"negative x", with(StepSeries{Name: "b", X: []float64{-1, 2}, Y: y}),
			`curve chart "S": series "b": x 0 is -1, want a number ≥ 0`},
		{"y above 1", with(StepSeries{Name: "b", X: x, Y: []float64{0.9, 1.1}}),
			`curve chart "S": series "b": y 1 is 1.1, want a share from 0 to 1`},
		{"NaN y", with(StepSeries{Name: "b", X: x, Y: []float64{nan, 0.5}}),
			`curve chart "S": series "b": y 0 is NaN, want a share from 0 to 1`},
		{"start above 1", with(StepSeries{Name: "b", X: x, Y: y, Start: 2}),
			`curve chart "S": series "b": start is 2, want a share from 0 to 1`},
		{"lower above upper", with(StepSeries{Name: "b", X: x, Y: y, Lower: []float64{0.85, 0.8}, Upper: []float64{0.95, 0.7}}),
			`curve chart "S": series "b": lower 1 (0.8) is above upper 1 (0.7)`},
		{"negative lower", with(StepSeries{Name: "b", X: x, Y: y, Lower: []float64{-0.1, 0.7}, Upper: y}),
			`curve chart "S": series "b": lower 0 is -0.1, want a share from 0 to 1`},
		{"negative end", with(StepSeries{Name: "b", X: x, Y: y, End: -1}),
			`curve chart "S": series "b": end is -1, want a number ≥ 0 (0: MaxX)`},
		{"end past MaxX", with(StepSeries{Name: "b", X: x, Y: y, End: 4}),
			`curve chart "S": series "b": end 4 is past MaxX (3)`},
		{"nothing to draw to", Curves{Title: "S"},
			`curve chart "S": MaxX is 0, want a number > 0 (or 0 with a last x > 0)`},
		{"infinite MaxX", Curves{Title: "S", MaxX: math.Inf(1)},
			`curve chart "S": MaxX is +Inf, want a number > 0 (or 0 with a last x > 0)`},
		{"point past MaxX", Curves{Title: "S", MaxX: 3, At: []float64{1, 4}},
			`curve chart "S": at 1 is 4, want a number from 0 to MaxX (3)`},
		{"NaN point", Curves{Title: "S", MaxX: 3, At: []float64{nan}},
			`curve chart "S": at 0 is NaN, want a number from 0 to MaxX (3)`},
		{"points not ascending", Curves{Title: "S", MaxX: 3, At: []float64{2, 1}},
			`curve chart "S": at 1 (1) is not above at 0 (2)`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkRefused(t, tt.cv, tt.want)
		})
	}
}

func TestCurvesFiles(t *testing.T) {
	// Survival curves (1 − F) with a step on every day each cohort was
	// observed, monthly cohorts observed 30 days less each. Eight with
	// daily bands make an SVG of about 180 KB, past checkSVG's limit, so
	// the eight are drawn without bands and four with them.
	cohorts := func(n int, bands bool) Curves {
		cv := Curves{Title: fmt.Sprintf("%d cohorts", n), MaxX: 365}
		for i := range n {
			x, y, lo, hi := repurchaseCurve(365 - 30*i)
			for j := range y {
				y[j], lo[j], hi[j] = 1-y[j], 1-hi[j], 1-lo[j]
			}
			s := StepSeries{Name: fmt.Sprintf("2024-%02d", i+1), X: x, Y: y, Start: 1, End: x[len(x)-1]}
			if bands {
				s.Lower, s.Upper = lo, hi
			}
			cv.Series = append(cv.Series, s)
		}
		return cv
	}
	own := cohortCurves()
	own.Title, own.Width, own.Height = "Survival <by> cohort & band", 300, 150
	tests := []struct {
		name          string
		cv            Curves
		width, height string
		pngW, pngH    int
	}{
		{"default size", cohortCurves(), "576pt", "240pt", 768, 320},
		{"own size", own, "300pt", "150pt", 400, 200},
		{"eight cohorts of a year", cohorts(maxCurves, false), "576pt", "240pt", 768, 320},
		{"four cohorts of a year with bands", cohorts(4, true), "576pt", "240pt", 768, 320},
		{"no series", Curves{Title: "No cohorts yet", MaxX: 365}, "576pt", "240pt", 768, 320},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkSVG(t, tt.cv, tt.cv.Title, tt.width, tt.height)
			checkPNG(t, tt.cv, tt.pngW, tt.pngH)
			var buf bytes.Buffer
			if err := tt.cv.SVG(&buf); err != nil {
				t.Fatal(err)
			}
			for _, s := range tt.cv.Series {
				if !strings.Contains(buf.String(), ">"+xmlEscape(t, s.Name)+"<") {
					t.Errorf("SVG lacks the legend entry %q", s.Name)
				}
			}
		})
	}
}
