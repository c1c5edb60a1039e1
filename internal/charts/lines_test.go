package charts

import (
	"io"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/plot/vg"
)

// Each series is drawn through its points in its palette colour, dashed
// when asked, with a legend entry: its name beside a short line in the
// same style.
func TestLinesPlotTheSeries(t *testing.T) {
	tests := []struct {
		name     string
		l        Lines
		ylo, yhi float64 // the y axis, worked out by hand
		yTicks   []string
		xTicks   []string
	}{
		{
			// Largest 0.9: 0.9/5 = 0.18 → step 0.2, 0 … 1 in percent.
			name: "two shares",
			l: Lines{Title: "What each X costs", Percent: true, X: []float64{1, 2, 3, 4},
				Series: []Series{
					{Name: "lapsed today", Y: []float64{0.9, 0.6, 0.3, 0.1}},
					{Name: "returned after lapse", Y: []float64{0.5, 0.4, 0.35, 0.3}, Dashed: true},
				},
				Markers: []Marker{{X: 2, Label: "X = 2 d"}},
			},
			ylo: 0, yhi: 1,
			yTicks: []string{"0%", "20%", "40%", "60%", "80%", "100%"},
			xTicks: []string{"1", "1.5", "2", "2.5", "3", "3.5", "4"}, // 3/8 → 0.5
		},
		{
			// Largest 0.03: 0.006 → step 0.01, 1 % apart: no decimals.
			name: "small shares",
			l: Lines{Title: "Small", Percent: true, X: []float64{0, 10},
				Series: []Series{{Name: "a", Y: []float64{0.03, 0.01}}}},
			ylo: 0, yhi: 0.03,
			yTicks: []string{"0%", "1%", "2%", "3%"},
			xTicks: []string{"0", "2", "4", "6", "8", "10"},
		},
		{
			// Largest 0.004: 0.0008 → step 0.001, 0.1 % apart: one decimal.
			name: "tiny shares",
			l: Lines{Title: "Tiny", Percent: true, X: []float64{0, 10},
				Series: []Series{{Name: "a", Y: []float64{0.004, 0}}}},
			ylo: 0, yhi: 0.004,
			yTicks: []string{"0%", "0.1%", "0.2%", "0.3%", "0.4%"},
			xTicks: []string{"0", "2", "4", "6", "8", "10"},
		},
		{
			// Counts up to 12: 2.4 → step 5; three series, the third
			// unnamed (no legend entry).
			name: "counts",
			l: Lines{Title: "Counts", X: []float64{0, 10, 20},
				Series: []Series{
					{Name: "first-time", Y: []float64{3, 12, 7}},
					{Name: "repeat", Y: []float64{1, 2, 3}, Dashed: true},
					{Y: []float64{0, 0, 0}},
				}},
			ylo: 0, yhi: 15,
			yTicks: []string{"0", "5", "10", "15"},
			xTicks: []string{"0", "5", "10", "15", "20"}, // 20/8 = 2.5 → 5
		},
		{
			// From −3 to 4: 7/5 → step 2, −4 … 4.
			name: "negative values",
			l: Lines{Title: "Change", X: []float64{1, 2},
				Series: []Series{{Name: "change", Y: []float64{-3, 4}}}},
			ylo: -4, yhi: 4,
			yTicks: []string{"-4", "-2", "0", "2", "4"},
			xTicks: []string{"1", "1.2", "1.4", "1.6", "1.8", "2"}, // 1/8 → 0.2
		},
		{
			name:   "no series",
			l:      Lines{Title: "Nothing yet"},
			ylo:    0,
			yhi:    1,
			yTicks: []string{"0", "1"},
			xTicks: []string{"0", "0.2", "0.4", "0.6", "0.8", "1"},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p, err := tt.l.plot()
			if err != nil {
				t.Fatal(err)
			}
			w, h := chartSize(tt.l.Width, tt.l.Height)
			tr := trace(t, p, w, h)
			xlo, xhi := 0.0, 1.0
			if len(tt.l.X) > 0 {
				xlo, xhi = tt.l.X[0], tt.l.X[len(tt.l.X)-1]
			}

			for i, s := range tt.l.Series {
				col := palette[i]
				want := make([]vg.Point, len(tt.l.X))
				for j, x := range tt.l.X {
					want[j] = tr.at(xlo, xhi, tt.ylo, tt.yhi, x, s.Y[j])
				}
				strokes := tr.stroked(col)
				wantStrokes := 2 // the series and its legend sample
				if s.Name == "" {
					wantStrokes = 1
				}
				if len(strokes) != wantStrokes {
					t.Fatalf("series %q: drew %d lines in its colour, want %d", s.Name, len(strokes), wantStrokes)
				}
				if !samePoints(strokes[0].pts, want) {
					t.Errorf("series %q drawn through\n%s\nwant\n%s", s.Name, fmtPoints(strokes[0].pts), fmtPoints(want))
				}
				for _, st := range strokes {
					if dashed := len(st.dashes) > 0; dashed != s.Dashed || st.width != curveWidth {
						t.Errorf("series %q drawn %v wide, dashed = %v; want %v, %v", s.Name, st.width, dashed, curveWidth, s.Dashed)
					}
				}
				if s.Name == "" {
					continue
				}
				// The legend: a horizontal sample line ending just left of
				// the name, level with it.
				name, ok := tr.drew(s.Name)
				if !ok {
					t.Fatalf("legend entry %q not drawn", s.Name)
				}
				sample := strokes[1].pts
				if len(sample) != 2 || !near(sample[0].Y, sample[1].Y) || !near(sample[1].X+markerGap, name.at.X) ||
					!near(sample[1].X-sample[0].X, legendLine) {
					t.Errorf("legend sample of %q is %s, want a %v-point horizontal line ending %v before x = %v",
						s.Name, fmtPoints(sample), legendLine, markerGap, name.at.X)
				}
				if d := tr.data; name.at.X < d.Min.X || name.at.X > d.Max.X || name.at.Y < d.Min.Y || name.at.Y > d.Max.Y {
					t.Errorf("legend entry %q at %v, outside the data area %v", s.Name, name.at, tr.data)
				}
			}

			var markerX []vg.Length
			for _, m := range tt.l.Markers {
				markerX = append(markerX, tr.at(xlo, xhi, 0, 1, m.X, 0).X)
			}
			checkMarkerLines(t, tr, tt.l.Markers, markerX)

			if got := tickLabels(p.Y); !slices.Equal(got, tt.yTicks) {
				t.Errorf("y tick labels = %q, want %q", got, tt.yTicks)
			}
			if got := tickLabels(p.X); !slices.Equal(got, tt.xTicks) {
				t.Errorf("x tick labels = %q, want %q", got, tt.xTicks)
			}
			if p.X.Min != xlo || p.X.Max != xhi || p.Y.Min != tt.ylo || math.Abs(p.Y.Max-tt.yhi) > 1e-12 {
				t.Errorf("axes %v…%v × %v…%v, want %v…%v × %v…%v", p.X.Min, p.X.Max, p.Y.Min, p.Y.Max, xlo, xhi, tt.ylo, tt.yhi)
			}
		})
	}
}

// The legend moves down below the rows of marker labels.
func TestLegendBelowMarkerLabels(t *testing.T) {
	x := []float64{1, 100, 200, 300, 365}
	y := []float64{0.1, 0.1, 0.1, 0.1, 0.1}
	tests := []struct {
		name    string
		markers []Marker
	}{
		{"no markers", nil},
		{"one row", []Marker{{X: 330, Label: "a marker near the legend"}}},
		{"two rows", []Marker{{X: 320, Label: "90th percentile 320 d"}, {X: 330, Label: "X = 330 d"}}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			l := Lines{X: x, Series: []Series{{Name: "lapsed today", Y: y}}, Percent: true, Markers: tt.markers}
			p, err := l.plot()
			if err != nil {
				t.Fatal(err)
			}
			tr := trace(t, p, DefaultWidth, DefaultHeight)
			legend, ok := tr.drew("lapsed today")
			if !ok {
				t.Fatal("legend not drawn")
			}
			lowest := tr.data.Max.Y // the top of the data area
			for _, m := range tt.markers {
				at, ok := tr.drew(m.Label)
				if !ok {
					t.Fatalf("label %q not drawn", m.Label)
				}
				lowest = min(lowest, at.at.Y)
			}
			// The legend's baseline is below the lowest label's by at least
			// the height of a line of legend text.
			if gap := lowest - legend.at.Y; gap < legendStyle().Height("0") {
				t.Errorf("legend baseline %v is %v below the lowest label or the top (%v), want at least %v",
					legend.at.Y, gap, lowest, legendStyle().Height("0"))
			}
		})
	}
}

func TestLinesRows(t *testing.T) {
	tests := []struct {
		name string
		l    Lines
		want []SeriesRow
	}{
		{
			name: "shares",
			l: Lines{Percent: true, X: []float64{1, 45},
				Series: []Series{{Name: "a", Y: []float64{0.625, 0.07}}, {Name: "b", Y: []float64{1, 0.12345}}}},
			want: []SeriesRow{
				{Label: "1", Values: []float64{0.625, 1}, Texts: []string{"62.5%", "100%"}},
				{Label: "45", Values: []float64{0.07, 0.12345}, Texts: []string{"7%", "12.3%"}},
			},
		},
		{
			name: "counts",
			l:    Lines{X: []float64{1000}, Series: []Series{{Name: "a", Y: []float64{1234}}}},
			want: []SeriesRow{{Label: "1,000", Values: []float64{1234}, Texts: []string{"1,234"}}},
		},
		{name: "nothing", l: Lines{}, want: []SeriesRow{}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := tt.l.Rows()
			same := slices.EqualFunc(got, tt.want, func(a, b SeriesRow) bool {
				return a.Label == b.Label && slices.Equal(a.Values, b.Values) && slices.Equal(a.Texts, b.Texts)
			})
			if !same {
				t.Errorf("Rows() = %+v, want %+v", got, tt.want)
			}
		})
	}
}

func TestLinesRefuseBadSeries(t *testing.T) {
	x := []float64{1, 2, 3}
	tests := []struct {
		name string
		l    Lines
		want string
	}{
		{"short series", Lines{Title: "Costs", X: x, Series: []Series{{Name: "lapsed", Y: []float64{1, 2}}}},
			`line chart "Costs": series "lapsed" has 2 values for 3 x values`},
		{"NaN value", Lines{Title: "Costs", X: x, Series: []Series{{Name: "a", Y: []float64{1, 2, 3}}, {Name: "b", Y: []float64{1, math.NaN(), 3}}}},
			`line chart "Costs": series "b" at x 1 is NaN`},
		{"infinite value", Lines{Title: "Costs", X: x, Series: []Series{{Name: "a", Y: []float64{math.Inf(-1), 2, 3}}}},
			`line chart "Costs": series "a" at x 0 is -Inf`},
		{"NaN x", Lines{Title: "Costs", X: []float64{1, math.NaN()}},
			`line chart "Costs": x 1 is NaN`},
		{"x not ascending", Lines{Title: "Costs", X: []float64{1, 3, 2}},
			`line chart "Costs": x 2 (2) is not above x 1 (3)`},
		{"marker before the first x", Lines{Title: "Costs", X: x, Markers: []Marker{{X: 0.5, Label: "X = 0.5 d"}}},
			`line chart "Costs": marker "X = 0.5 d" at x = 0.5 is outside the x axis (1 to 3)`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkRefused(t, tt.l, tt.want)
		})
	}
}

func TestLinesFiles(t *testing.T) {
	l := sensitivityLines()
	tests := []struct {
		name          string
		l             Lines
		width, height string
		pngW, pngH    int
	}{
		{"default size", l, "576pt", "240pt", 768, 320},
		{"own size", Lines{Title: "Costs <by> X & group", X: l.X, Series: l.Series[:1], Width: 300, Height: 150}, "300pt", "150pt", 400, 200},
		{"a single x", Lines{Title: "One", X: []float64{45}, Series: []Series{{Name: "a", Y: []float64{0.5}}}}, "576pt", "240pt", 768, 320},
		{"no series", Lines{Title: "Nothing yet"}, "576pt", "240pt", 768, 320},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkSVG(t, tt.l, tt.l.Title, tt.width, tt.height)
			checkPNG(t, tt.l, tt.pngW, tt.pngH)
		})
	}
}

// sensitivityLines is the churn-window page's chart: for X = 1 … 365, the
// share lapsed today and the share that returned after a lapse.
func sensitivityLines() Lines {
	l := Lines{Title: "What each churn window costs", XLabel: "Churn window X (days)", Percent: true,
		Series:  []Series{{Name: "lapsed today"}, {Name: "returned after lapse", Dashed: true}},
		Markers: []Marker{{X: 41, Label: "90th percentile 41 d", Dashed: true}, {X: 45, Label: "X = 45 d"}}}
	for d := 1; d <= 365; d++ {
		l.X = append(l.X, float64(d))
		l.Series[0].Y = append(l.Series[0].Y, math.Exp(-float64(d)/60))
		l.Series[1].Y = append(l.Series[1].Y, 0.8*math.Exp(-float64(d)/150))
	}
	return l
}

// BenchmarkLinesSVG and BenchmarkLinesPNG draw the sensitivity chart: two
// series of 365 points with two markers.
func BenchmarkLinesSVG(b *testing.B) {
	l := sensitivityLines()
	for b.Loop() {
		if err := l.SVG(io.Discard); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkLinesPNG(b *testing.B) {
	l := sensitivityLines()
	for b.Loop() {
		if err := l.PNG(io.Discard); err != nil {
			b.Fatal(err)
		}
	}
}
