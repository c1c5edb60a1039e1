package charts

import (
	"io"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/plot/vg"
)

// xy is a point in data coordinates, for corners worked out by hand.
type xy struct{ x, y float64 }

// The curve drawn has its corners where the steps are: flat at the old
// value up to each x, straight up or down to the new value there, flat to
// MaxX after the last step drawn.
func TestStepsPlotTheCurve(t *testing.T) {
	tests := []struct {
		name    string
		s       Steps
		maxX    float64 // the end of the x axis
		corners []xy
		band    []xy // the band's outline: upper from 0, then lower back to 0
		xTicks  []string
	}{
		{
			name:    "repurchase curve from 0",
			s:       Steps{Title: "F", X: []float64{2, 5, 9}, Y: []float64{0.2, 0.5, 0.6}, MaxX: 12},
			maxX:    12,
			corners: []xy{{0, 0}, {2, 0}, {2, 0.2}, {5, 0.2}, {5, 0.5}, {9, 0.5}, {9, 0.6}, {12, 0.6}},
			xTicks:  []string{"0", "2", "4", "6", "8", "10", "12"}, // 12/8 = 1.5 → 2
		},
		{
			// The step at 0 rises at once; the step at 20 is past MaxX.
			name:    "a step at 0 and one past MaxX",
			s:       Steps{Title: "F", X: []float64{0, 3, 20}, Y: []float64{0.1, 0.4, 0.9}, MaxX: 10},
			maxX:    10,
			corners: []xy{{0, 0}, {0, 0.1}, {3, 0.1}, {3, 0.4}, {10, 0.4}},
			xTicks:  []string{"0", "2", "4", "6", "8", "10"},
		},
		{
			name:    "the last step at MaxX",
			s:       Steps{Title: "F", X: []float64{4, 8}, Y: []float64{0.25, 1}, MaxX: 8},
			maxX:    8,
			corners: []xy{{0, 0}, {4, 0}, {4, 0.25}, {8, 0.25}, {8, 1}},
			xTicks:  []string{"0", "1", "2", "3", "4", "5", "6", "7", "8"},
		},
		{
			name:    "MaxX 0 ends at the last step",
			s:       Steps{Title: "F", X: []float64{4, 8}, Y: []float64{0.25, 1}},
			maxX:    8,
			corners: []xy{{0, 0}, {4, 0}, {4, 0.25}, {8, 0.25}, {8, 1}},
			xTicks:  []string{"0", "1", "2", "3", "4", "5", "6", "7", "8"},
		},
		{
			name:    "a survival curve falling from 1",
			s:       Steps{Title: "S", X: []float64{1, 2}, Y: []float64{0.5, 0.25}, Start: 1, MaxX: 3},
			maxX:    3,
			corners: []xy{{0, 1}, {1, 1}, {1, 0.5}, {2, 0.5}, {2, 0.25}, {3, 0.25}},
			xTicks:  []string{"0", "0.5", "1", "1.5", "2", "2.5", "3"}, // 3/8 → 0.5
		},
		{
			name:    "no steps",
			s:       Steps{Title: "F", Start: 0.3, MaxX: 365},
			maxX:    365,
			corners: []xy{{0, 0.3}, {365, 0.3}},
			xTicks:  []string{"0", "50", "100", "150", "200", "250", "300", "350"},
		},
		{
			name: "with a band and markers",
			s: Steps{
				Title: "F", X: []float64{2, 5}, Y: []float64{0.2, 0.5}, MaxX: 6,
				Lower: []float64{0.1, 0.4}, Upper: []float64{0.3, 0.6},
				Markers: []Marker{{X: 4, Label: "X = 4 d"}, {X: 5.5, Label: "band", Dashed: true}},
			},
			maxX:    6,
			corners: []xy{{0, 0}, {2, 0}, {2, 0.2}, {5, 0.2}, {5, 0.5}, {6, 0.5}},
			band: []xy{
				{0, 0}, {2, 0}, {2, 0.3}, {5, 0.3}, {5, 0.6}, {6, 0.6}, // upper
				{6, 0.4}, {5, 0.4}, {5, 0.1}, {2, 0.1}, {2, 0}, {0, 0}, // lower, backwards
			},
			xTicks: []string{"0", "1", "2", "3", "4", "5", "6"},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p, err := tt.s.plot()
			if err != nil {
				t.Fatal(err)
			}
			w, h := chartSize(tt.s.Width, tt.s.Height)
			tr := trace(t, p, w, h)
			canvas := func(pts []xy) []vg.Point {
				out := make([]vg.Point, len(pts))
				for i, p := range pts {
					out[i] = tr.at(0, tt.maxX, 0, 1, p.x, p.y)
				}
				return out
			}

			curves := tr.stroked(Accent)
			if len(curves) != 1 {
				t.Fatalf("drew %d accent lines, want 1 curve", len(curves))
			}
			if want := canvas(tt.corners); !samePoints(curves[0].pts, want) {
				t.Errorf("curve drawn through\n%s\nwant\n%s", fmtPoints(curves[0].pts), fmtPoints(want))
			}
			if curves[0].width != curveWidth || len(curves[0].dashes) != 0 {
				t.Errorf("curve %v wide with dashes %v, want %v and solid", curves[0].width, curves[0].dashes, curveWidth)
			}

			bands := tr.filled(bandColor)
			switch {
			case tt.band == nil && len(bands) != 0:
				t.Errorf("drew %d bands, want none", len(bands))
			case tt.band != nil && len(bands) != 1:
				t.Errorf("drew %d bands, want 1", len(bands))
			case tt.band != nil:
				if want := canvas(tt.band); !samePoints(bands[0].pts, want) {
					t.Errorf("band drawn through\n%s\nwant\n%s", fmtPoints(bands[0].pts), fmtPoints(want))
				}
			}

			var markerX []vg.Length
			for _, m := range tt.s.Markers {
				markerX = append(markerX, tr.at(0, tt.maxX, 0, 1, m.X, 0).X)
			}
			checkMarkerLines(t, tr, tt.s.Markers, markerX)

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

func TestStepsRows(t *testing.T) {
	tests := []struct {
		name string
		s    Steps
		want []Row
	}{
		{
			name: "curve",
			s:    Steps{X: []float64{3, 41, 400}, Y: []float64{0.07, 0.625, 0.9}, MaxX: 365},
			want: []Row{{Label: "3", Value: 0.07, Text: "7%"}, {Label: "41", Value: 0.625, Text: "62.5%"}},
		},
		{
			name: "with a band",
			s:    Steps{X: []float64{1}, Y: []float64{0.5}, Lower: []float64{0.4321}, Upper: []float64{0.6}, MaxX: 2},
			want: []Row{{Label: "1", Value: 0.5, Text: "50% (43.2%–60%)"}},
		},
		{name: "no steps", s: Steps{MaxX: 10}, want: nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tt.s.Rows(); !slices.Equal(got, tt.want) {
				t.Errorf("Rows() = %+v, want %+v", got, tt.want)
			}
		})
	}
}

func TestStepsRefuseBadCurves(t *testing.T) {
	x, y := []float64{1, 2}, []float64{0.1, 0.2}
	tests := []struct {
		name string
		s    Steps
		want string
	}{
		{"fewer y than x", Steps{Title: "F", X: x, Y: y[:1], MaxX: 3},
			`step chart "F": 2 x values for 1 y values`},
		{"half a band", Steps{Title: "F", X: x, Y: y, Lower: y, MaxX: 3},
			`step chart "F": a band needs both Lower and Upper`},
		{"short band", Steps{Title: "F", X: x, Y: y, Lower: y, Upper: y[:1], MaxX: 3},
			`step chart "F": band of 2 lower and 1 upper values for 2 x values`},
		{"NaN x", Steps{Title: "F", X: []float64{1, math.NaN()}, Y: y, MaxX: 3},
			`step chart "F": x 1 is NaN, want a number ≥ 0`},
		{"negative x", Steps{Title: "F", X: []float64{-1, 2}, Y: y, MaxX: 3},
			`step chart "F": x 0 is -1, want a number ≥ 0`},
		{"x not ascending", Steps{Title: "F", X: []float64{2, 1}, Y: y, MaxX: 3},
			`step chart "F": x 1 (1) is not above x 0 (2)`},
		{"infinite y", Steps{Title: "F", X: x, Y: []float64{0.1, math.Inf(1)}, MaxX: 3},
			`step chart "F": y 1 is +Inf, want a share from 0 to 1`},
		{"y above 1", Steps{Title: "F", X: x, Y: []float64{0.1, 1.2}, MaxX: 3},
			`step chart "F": y 1 is 1.2, want a share from 0 to 1`},
		{"NaN start", Steps{Title: "F", X: x, Y: y, Start: math.NaN(), MaxX: 3},
			`step chart "F": start is NaN, want a share from 0 to 1`},
		{"NaN lower", Steps{Title: "F", X: x, Y: y, Lower: []float64{math.NaN(), 0.1}, Upper: y, MaxX: 3},
			`step chart "F": lower 0 is NaN, want a share from 0 to 1`},
		{"negative upper", Steps{Title: "F", X: x, Y: y, Lower: y, Upper: []float64{-0.1, 0.2}, MaxX: 3},
			`step chart "F": upper 0 is -0.1, want a share from 0 to 1`},
		{"lower above upper", Steps{Title: "F", X: x, Y: y, Lower: []float64{0, 0.3}, Upper: y, MaxX: 3},
			`step chart "F": lower 1 (0.3) is above upper 1 (0.2)`},
		{"negative MaxX", Steps{Title: "F", X: x, Y: y, MaxX: -1},
			`step chart "F": MaxX is -1, want a number > 0 (or 0 with a last x > 0)`},
		{"infinite MaxX", Steps{Title: "F", X: x, Y: y, MaxX: math.Inf(1)},
			`step chart "F": MaxX is +Inf, want a number > 0 (or 0 with a last x > 0)`},
		{"nothing to draw to", Steps{Title: "F"},
			`step chart "F": MaxX is 0, want a number > 0 (or 0 with a last x > 0)`},
		{"marker past MaxX", Steps{Title: "F", X: x, Y: y, MaxX: 3, Markers: []Marker{{X: 4, Label: "X = 4 d"}}},
			`step chart "F": marker "X = 4 d" at x = 4 is outside the x axis (0 to 3)`},
		{"infinite marker", Steps{Title: "F", X: x, Y: y, MaxX: 3, Markers: []Marker{{X: math.Inf(1), Label: "X"}}},
			`step chart "F": marker "X" at x = +Inf`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkRefused(t, tt.s, tt.want)
		})
	}
}

func TestStepsFiles(t *testing.T) {
	x, y, lo, hi := repurchaseCurve(365)
	tests := []struct {
		name          string
		s             Steps
		width, height string
		pngW, pngH    int
	}{
		{"default size", Steps{Title: "Reordered within t days <F(t)> & band", X: x, Y: y, Lower: lo, Upper: hi, MaxX: 365,
			Markers: []Marker{{X: 91, Label: "X = 91 d"}}}, "576pt", "240pt", 768, 320},
		{"own size", Steps{Title: "F", X: x, Y: y, MaxX: 365, Width: 300, Height: 150}, "300pt", "150pt", 400, 200},
		{"no steps", Steps{Title: "No episodes", MaxX: 365}, "576pt", "240pt", 768, 320},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkSVG(t, tt.s, tt.s.Title, tt.width, tt.height)
			checkPNG(t, tt.s, tt.pngW, tt.pngH)
		})
	}
}

// repurchaseCurve returns a step curve with a step on each of n days that
// rises towards 70 %, and a band 5 points either side of it.
func repurchaseCurve(n int) (x, y, lo, hi []float64) {
	for d := 1; d <= n; d++ {
		f := 0.7 * (1 - math.Exp(-float64(d)/40))
		x = append(x, float64(d))
		y = append(y, f)
		lo = append(lo, max(0, f-0.05))
		hi = append(hi, min(1, f+0.05))
	}
	return x, y, lo, hi
}

// BenchmarkStepsSVG draws a Kaplan–Meier curve with a step on every day of
// a year and its band, the largest the churn-window page shows.
func BenchmarkStepsSVG(b *testing.B) {
	x, y, lo, hi := repurchaseCurve(365)
	s := Steps{Title: "Reordered within t days", X: x, Y: y, Lower: lo, Upper: hi, MaxX: 365,
		Markers: []Marker{{X: 91, Label: "X = 91 d"}}}
	for b.Loop() {
		if err := s.SVG(io.Discard); err != nil {
			b.Fatal(err)
		}
	}
}
