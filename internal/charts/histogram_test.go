package charts

import (
	"fmt"
	"io"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/plot/vg"
)

func TestBinDays(t *testing.T) {
	// The logarithmic edges 2^(k/4), k = 0…14, to four decimals.
	logEdges := []float64{1, 1.1892, 1.4142, 1.6818, 2, 2.3784, 2.8284, 3.3636, 4, 4.7568, 5.6569, 6.7272, 8, 9.5137, 11.3137}
	tests := []struct {
		name      string
		values    []int
		maxDays   int
		logScale  bool
		wantEdges []float64 // nil: check only the first and last edge and the count
		first     float64
		last      float64
		bins      int
		// wantCounts gives the non-zero counts by bin; every other bin is 0.
		wantCounts map[int]float64
	}{
		{
			// 365/7 = 52.1 → 53 bins (|53 − 50| = 3); 7 days → 53,
			// 8 days → 46 (4): weekly bins, 0 to 371.
			name:    "a year, weekly bins",
			values:  []int{0, 1, 6, 7, 13, 14, 364, 365, 366, 400, -3},
			maxDays: 365,
			first:   0, last: 371, bins: 53,
			// 0, 1, 6 and −3 (below the first edge) in 0–6; 7 and 13 in
			// 7–13; 14 in 14–20; 364 and 365 and the overflow 366 and 400 in
			// the last bin, 364–370.
			wantCounts: map[int]float64{0: 4, 1: 2, 2: 1, 52: 4},
		},
		{
			// Under 49 days every day has its own bin: 0…30 is 31 bins.
			name:       "a month, daily bins",
			values:     []int{0, 30, 31, 5, 5},
			maxDays:    30,
			wantEdges:  seqFloat(0, 31, 1),
			wantCounts: map[int]float64{0: 1, 5: 2, 30: 2},
		},
		{
			// 100/1 + 1 = 101 bins (51 off), 100/2 + 1 = 51 (1 off).
			name:    "100 days, two-day bins",
			values:  []int{1, 2, 3, 99, 100, 101},
			maxDays: 100,
			first:   0, last: 102, bins: 51,
			wantCounts: map[int]float64{0: 1, 1: 2, 49: 1, 50: 2},
		},
		{
			// 730/14 + 1 = 53 (3 off), /15 + 1 = 49 (1 off), /16 + 1 = 46.
			name:    "two years, 15-day bins",
			values:  []int{15, 29, 30, 730},
			maxDays: 730,
			first:   0, last: 735, bins: 49,
			wantCounts: map[int]float64{1: 2, 2: 1, 48: 1},
		},
		{
			// 74/1 + 1 = 75 (25 off), 74/2 + 1 = 38 (12 off): fewer than 40
			// is as close as whole days get.
			name:    "74 days, two-day bins",
			values:  []int{74},
			maxDays: 74,
			first:   0, last: 76, bins: 38,
			wantCounts: map[int]float64{37: 1},
		},
		{
			// 612/12 + 1 = 52 and 612/13 + 1 = 48 are both 2 off: the
			// narrower, 12 days, wins (612/11 + 1 = 56).
			name:    "a tie, the narrower bins",
			values:  []int{11, 12, 612, 700},
			maxDays: 612,
			first:   0, last: 624, bins: 52,
			wantCounts: map[int]float64{0: 1, 1: 1, 51: 2},
		},
		{
			// 150/3 + 1 = 51 (1 off) beats 150/2 + 1 = 76 and 150/4 + 1 = 38.
			name:    "150 days, three-day bins",
			values:  []int{2, 3, 149, 150},
			maxDays: 150,
			first:   0, last: 153, bins: 51,
			wantCounts: map[int]float64{0: 1, 1: 1, 49: 1, 50: 1},
		},
		{
			// Edges up to the first above 10: 2^(13/4) = 9.51 ≤ 10 <
			// 2^(14/4) = 11.31, so 14 bins. 0 (below 1) and 1 in [1, 1.19);
			// 2 in [2, 2.38); 3 in [2.83, 3.36); 4 in [4, 4.76); 5 in
			// [4.76, 5.66); 8 and 9 in [8, 9.51); 10 and the overflow 100 in
			// the last bin. Bins 1–3, 5, 7, 10 and 11 hold no whole day.
			name:       "logarithmic to 10 days",
			values:     []int{0, 1, 2, 3, 4, 5, 8, 9, 10, 100},
			maxDays:    10,
			logScale:   true,
			wantEdges:  logEdges,
			wantCounts: map[int]float64{0: 2, 4: 1, 6: 1, 8: 1, 9: 1, 12: 2, 13: 2},
		},
		{
			// 2^(8/4) = 4 is an edge: 4 starts bin 8, it is not the end of
			// bin 7. 8 = 2^(12/4) is an edge too, so the last bin, the one
			// that holds maxDays 8, is [8, 9.51).
			name:       "logarithmic, values on edges",
			values:     []int{4, 8, 8},
			maxDays:    8,
			logScale:   true,
			wantEdges:  logEdges[:14],
			wantCounts: map[int]float64{8: 1, 12: 2},
		},
		{
			// The first edge above 1 is 2^(1/4): a single bin.
			name:       "logarithmic to 1 day",
			values:     []int{1, 5},
			maxDays:    1,
			logScale:   true,
			wantEdges:  logEdges[:2],
			wantCounts: map[int]float64{0: 2},
		},
		{
			// maxDays below 1 is taken as 1: 1/1 + 1 = 2 daily bins.
			name:       "no values, maxDays 0",
			maxDays:    0,
			wantEdges:  []float64{0, 1, 2},
			wantCounts: map[int]float64{},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			edges, counts := BinDays(tt.values, tt.maxDays, tt.logScale)
			if len(edges) != len(counts)+1 {
				t.Fatalf("BinDays gave %d edges for %d counts", len(edges), len(counts))
			}
			if tt.wantEdges != nil {
				if !slices.EqualFunc(edges, tt.wantEdges, func(a, b float64) bool { return math.Abs(a-b) < 1e-4 }) {
					t.Errorf("BinDays(…, %d, %v) edges = %v, want %v", tt.maxDays, tt.logScale, edges, tt.wantEdges)
				}
			} else {
				if len(counts) != tt.bins || edges[0] != tt.first || edges[len(edges)-1] != tt.last {
					t.Errorf("BinDays(…, %d, %v) = %d bins from %v to %v, want %d from %v to %v",
						tt.maxDays, tt.logScale, len(counts), edges[0], edges[len(edges)-1], tt.bins, tt.first, tt.last)
				}
				// Linear bins are all as wide.
				w := (tt.last - tt.first) / float64(tt.bins)
				for i := 1; i < len(edges); i++ {
					if edges[i]-edges[i-1] != w {
						t.Errorf("bin %d is %v wide, want %v", i-1, edges[i]-edges[i-1], w)
					}
				}
			}
			total := 0.0
			for i, c := range counts {
				total += c
				if c != tt.wantCounts[i] {
					t.Errorf("count of bin %d [%v, %v) = %v, want %v", i, edges[i], edges[i+1], c, tt.wantCounts[i])
				}
			}
			if total != float64(len(tt.values)) {
				t.Errorf("counts add up to %v, want %d (every value counted once)", total, len(tt.values))
			}
		})
	}
}

func seqFloat(from, to, step float64) []float64 {
	var out []float64
	for v := from; v <= to; v += step {
		out = append(out, v)
	}
	return out
}

// The bars drawn are the bins given: bar i spans its edges (less the gap
// between bars) and reaches from 0 to its count; on a logarithmic axis the
// edges' positions are proportional to their logarithms.
func TestHistogramPlotsTheBins(t *testing.T) {
	tests := []struct {
		name   string
		h      Histogram
		yMax   float64 // the top of the y axis, worked out by hand
		yTicks []string
		xTicks []string
		inset  bool // bars are wider than 3 points and keep a gap
	}{
		{
			// Largest count 7: 7/5 = 1.4 → step 2 → 0 … 8. x: 40/8 = 5.
			name: "linear, with an empty bin and markers",
			h: Histogram{
				Title: "Gaps", Edges: []float64{0, 10, 20, 30, 40}, Counts: []float64{3, 0, 7, 1},
				Markers: []Marker{{X: 15, Label: "90th percentile 15 d", Dashed: true}, {X: 25, Label: "X = 25 d"}},
			},
			yMax:   8,
			yTicks: []string{"0", "2", "4", "6", "8"},
			xTicks: []string{"0", "5", "10", "15", "20", "25", "30", "35", "40"},
			inset:  true,
		},
		{
			// Doubling edges on a log axis: each bar a quarter of the width.
			// Largest 4: 0.8 → step 1.
			name: "logarithmic",
			h: Histogram{
				Title: "Gaps", Edges: []float64{1, 2, 4, 8, 16}, Counts: []float64{1, 2, 3, 4}, LogX: true,
				Markers: []Marker{{X: 4, Label: "X = 4 d"}},
			},
			yMax:   4,
			yTicks: []string{"0", "1", "2", "3", "4"},
			xTicks: []string{"1", "2", "5", "10"},
			inset:  true,
		},
		{
			// Weights, not counts: 1.5/5 = 0.3 → step 0.5.
			name:   "fractional counts",
			h:      Histogram{Title: "Share", Edges: []float64{0, 1, 2}, Counts: []float64{0.5, 1.5}},
			yMax:   1.5,
			yTicks: []string{"0", "0.5", "1", "1.5"},
			xTicks: []string{"0", "0.5", "1", "1.5", "2"}, // 2/8 = 0.25 → 0.5
			inset:  true,
		},
		{
			// 200 bins on about 520 points are under 3 points each: bars
			// touch. 200/8 = 25 → step 50.
			name:   "narrow bars",
			h:      Histogram{Title: "Days", Edges: seqFloat(0, 200, 1), Counts: slices.Repeat([]float64{1}, 200)},
			yMax:   1,
			yTicks: []string{"0", "1"},
			xTicks: []string{"0", "50", "100", "150", "200"},
			inset:  false,
		},
		{
			name:   "no bins",
			h:      Histogram{Title: "No gaps yet"},
			yMax:   1,
			yTicks: []string{"0", "1"},
			xTicks: []string{"0", "0.2", "0.4", "0.6", "0.8", "1"}, // 1/8 → 0.2
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p, err := tt.h.plot()
			if err != nil {
				t.Fatal(err)
			}
			w, h := chartSize(tt.h.Width, tt.h.Height)
			tr := trace(t, p, w, h)

			lo, hi := 0.0, 1.0
			if len(tt.h.Edges) > 0 {
				lo, hi = tt.h.Edges[0], tt.h.Edges[len(tt.h.Edges)-1]
			}
			x := func(v float64) vg.Length {
				frac := (v - lo) / (hi - lo)
				if tt.h.LogX {
					frac = math.Log(v/lo) / math.Log(hi/lo)
				}
				return tr.data.Min.X + vg.Length(frac)*tr.data.Size().X
			}
			y := func(v float64) vg.Length { return tr.data.Min.Y + vg.Length(v/tt.yMax)*tr.data.Size().Y }

			var want []vg.Rectangle
			for i, c := range tt.h.Counts {
				if c == 0 {
					continue
				}
				r := vg.Rectangle{Min: vg.Point{X: x(tt.h.Edges[i]), Y: y(0)}, Max: vg.Point{X: x(tt.h.Edges[i+1]), Y: y(c)}}
				if tt.inset {
					r.Min.X += barGap / 2
					r.Max.X -= barGap / 2
				}
				want = append(want, r)
			}
			bars := tr.filled(Accent)
			if len(bars) != len(want) {
				t.Fatalf("drew %d bars, want %d", len(bars), len(want))
			}
			for i, b := range bars {
				got := bounds(b.pts)
				if !near(got.Min.X, want[i].Min.X) || !near(got.Max.X, want[i].Max.X) ||
					!near(got.Min.Y, want[i].Min.Y) || !near(got.Max.Y, want[i].Max.Y) {
					t.Errorf("bar %d spans %v, want %v", i, got, want[i])
				}
			}
			if tt.h.LogX {
				// Doubling edges are evenly spaced on a log axis.
				for i := 1; i < len(bars); i++ {
					w0 := bounds(bars[i-1].pts).Size().X
					if wi := bounds(bars[i].pts).Size().X; !near(wi, w0) {
						t.Errorf("bar %d is %v wide, bar %d %v; want equal widths on a log axis", i, wi, i-1, w0)
					}
				}
			}

			var markerX []vg.Length
			for _, m := range tt.h.Markers {
				markerX = append(markerX, x(m.X))
			}
			checkMarkerLines(t, tr, tt.h.Markers, markerX)

			if got := tickLabels(p.Y); !slices.Equal(got, tt.yTicks) {
				t.Errorf("y tick labels = %q, want %q", got, tt.yTicks)
			}
			if got := tickLabels(p.X); !slices.Equal(got, tt.xTicks) {
				t.Errorf("x tick labels = %q, want %q", got, tt.xTicks)
			}
			if p.X.Min != lo || p.X.Max != hi || p.Y.Min != 0 || p.Y.Max != tt.yMax {
				t.Errorf("axes %v…%v × %v…%v, want %v…%v × 0…%v", p.X.Min, p.X.Max, p.Y.Min, p.Y.Max, lo, hi, tt.yMax)
			}
			if _, ok := tr.drew(tt.h.Title); !ok {
				t.Errorf("title %q not drawn", tt.h.Title)
			}
		})
	}
}

// Marker labels sit beside the top of their lines, to the right unless
// that runs past the right edge, and stack in rows only where they would
// overlap.
func TestMarkerLabels(t *testing.T) {
	type want struct {
		row   int
		right bool // the label is to the right of its line
	}
	tests := []struct {
		name    string
		markers []Marker
		want    []want
	}{
		{
			name:    "close markers stack",
			markers: []Marker{{X: 41, Label: "90th percentile 41 d"}, {X: 45, Label: "X = 45 d"}},
			want:    []want{{0, true}, {1, true}},
		},
		{
			name:    "far markers share a row",
			markers: []Marker{{X: 41, Label: "90th percentile 41 d"}, {X: 300, Label: "X = 300 d"}},
			want:    []want{{0, true}, {0, true}},
		},
		{
			name:    "a third marker goes back to the first row with room",
			markers: []Marker{{X: 41, Label: "90th percentile 41 d"}, {X: 45, Label: "X = 45 d"}, {X: 300, Label: "X = 300 d"}},
			want:    []want{{0, true}, {1, true}, {0, true}},
		},
		{
			name:    "at the right edge the label goes left",
			markers: []Marker{{X: 395, Label: "99th percentile 395 d"}},
			want:    []want{{0, false}},
		},
		{
			name:    "an unlabelled marker takes no row",
			markers: []Marker{{X: 41}, {X: 45, Label: "X = 45 d"}},
			want:    []want{{}, {0, true}},
		},
	}
	sty := labelStyle()
	rowHeight := sty.Height("0") + 2
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			h := Histogram{Edges: []float64{0, 400}, Counts: []float64{1}, Markers: tt.markers}
			p, err := h.plot()
			if err != nil {
				t.Fatal(err)
			}
			tr := trace(t, p, DefaultWidth, DefaultHeight)
			top := vg.Length(math.Inf(-1)) // the baseline of row 0
			for _, m := range tt.markers {
				if at, ok := tr.drew(m.Label); ok {
					top = max(top, at.at.Y)
				}
			}
			for i, m := range tt.markers {
				at, ok := tr.drew(m.Label)
				if m.Label == "" {
					continue
				}
				if !ok {
					t.Fatalf("label %q not drawn", m.Label)
				}
				line := tr.at(0, 400, 0, 1, m.X, 0).X
				if tt.want[i].right {
					if !near(at.at.X, line+markerGap) {
						t.Errorf("label %q starts at x = %v, want %v (right of its line)", m.Label, at.at.X, line+markerGap)
					}
				} else if end := at.at.X + sty.Width(m.Label); !near(end, line-markerGap) {
					t.Errorf("label %q ends at x = %v, want %v (left of its line)", m.Label, end, line-markerGap)
				}
				if wantY := top - vg.Length(tt.want[i].row)*rowHeight; !near(at.at.Y, wantY) {
					t.Errorf("label %q at y = %v, want %v (row %d)", m.Label, at.at.Y, wantY, tt.want[i].row)
				}
			}
		})
	}
}

func TestHistogramRows(t *testing.T) {
	tests := []struct {
		name string
		h    Histogram
		want []Row
	}{
		{
			name: "weekly bins",
			h:    Histogram{Edges: []float64{0, 7, 14}, Counts: []float64{1234, 0}},
			want: []Row{{Label: "0–7", Value: 1234, Text: "1,234"}, {Label: "7–14", Value: 0, Text: "0"}},
		},
		{
			// 2^(1/4) = 1.189…, 2^(2/4) = 1.414…
			name: "logarithmic bins round to two decimals",
			h:    Histogram{Edges: []float64{1, math.Pow(2, 0.25), math.Sqrt2}, Counts: []float64{3, 0}, LogX: true},
			want: []Row{{Label: "1–1.19", Value: 3, Text: "3"}, {Label: "1.19–1.41", Value: 0, Text: "0"}},
		},
		{name: "no bins", h: Histogram{}, want: []Row{}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tt.h.Rows(); !slices.Equal(got, tt.want) {
				t.Errorf("Rows() = %+v, want %+v", got, tt.want)
			}
		})
	}
}

func TestHistogramRefusesBadBins(t *testing.T) {
	tests := []struct {
		name string
		h    Histogram
		want string
	}{
		{"too few edges", Histogram{Title: "Gaps", Edges: []float64{0, 1}, Counts: []float64{1, 2}},
			`histogram "Gaps": 2 edges for 2 counts, want 3`},
		{"edges without counts", Histogram{Title: "Gaps", Edges: []float64{0, 1}},
			`histogram "Gaps": 2 edges for 0 counts, want 1`},
		{"NaN edge", Histogram{Title: "Gaps", Edges: []float64{0, math.NaN()}, Counts: []float64{1}},
			`histogram "Gaps": edge 1 is NaN`},
		{"infinite edge", Histogram{Title: "Gaps", Edges: []float64{math.Inf(-1), 0}, Counts: []float64{1}},
			`histogram "Gaps": edge 0 is -Inf`},
		{"edges not ascending", Histogram{Title: "Gaps", Edges: []float64{0, 7, 7}, Counts: []float64{1, 2}},
			`histogram "Gaps": edge 2 (7) is not above edge 1 (7)`},
		{"NaN count", Histogram{Title: "Gaps", Edges: []float64{0, 7}, Counts: []float64{math.NaN()}},
			`histogram "Gaps": count of bin 0 is NaN, want a number ≥ 0`},
		{"infinite count", Histogram{Title: "Gaps", Edges: []float64{0, 7}, Counts: []float64{math.Inf(1)}},
			`histogram "Gaps": count of bin 0 is +Inf, want a number ≥ 0`},
		{"negative count", Histogram{Title: "Gaps", Edges: []float64{0, 7, 14}, Counts: []float64{1, -2}},
			`histogram "Gaps": count of bin 1 is -2, want a number ≥ 0`},
		{"log axis from 0", Histogram{Title: "Gaps", Edges: []float64{0, 1, 2}, Counts: []float64{1, 2}, LogX: true},
			`histogram "Gaps": a logarithmic x axis needs edges > 0, edge 0 is 0`},
		{"marker beyond the last edge", Histogram{Title: "Gaps", Edges: []float64{0, 7, 14}, Counts: []float64{1, 2},
			Markers: []Marker{{X: 45, Label: "X = 45 d"}}},
			`histogram "Gaps": marker "X = 45 d" at x = 45 is outside the x axis (0 to 14)`},
		{"NaN marker", Histogram{Title: "Gaps", Edges: []float64{0, 7}, Counts: []float64{1},
			Markers: []Marker{{X: math.NaN(), Label: "X"}}},
			`histogram "Gaps": marker "X" at x = NaN`},
		{"marker at 0 on a log axis", Histogram{Title: "Gaps", Edges: []float64{1, 2}, Counts: []float64{1}, LogX: true,
			Markers: []Marker{{X: 0, Label: "zero"}}},
			`histogram "Gaps": marker "zero" at x = 0 is outside the x axis (1 to 2)`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkRefused(t, tt.h, tt.want)
		})
	}
}

func TestHistogramFiles(t *testing.T) {
	edges, counts := BinDays([]int{1, 3, 7, 7, 12, 40, 41, 90, 400}, 365, false)
	logEdges, logCounts := BinDays([]int{1, 3, 7, 7, 12, 40, 41, 90, 400}, 365, true)
	tests := []struct {
		name          string
		h             Histogram
		width, height string
		pngW, pngH    int
	}{
		{"default size", Histogram{Title: "Gaps <in> days & weeks", Edges: edges, Counts: counts,
			Markers: []Marker{{X: 41, Label: "90th percentile 41 d", Dashed: true}, {X: 45, Label: "X = 45 d"}}},
			"576pt", "240pt", 768, 320},
		{"logarithmic", Histogram{Title: "Gaps", Edges: logEdges, Counts: logCounts, LogX: true,
			Markers: []Marker{{X: 41, Label: "X = 41 d"}}}, "576pt", "240pt", 768, 320},
		{"own size", Histogram{Title: "Gaps", Edges: edges, Counts: counts, Width: 300, Height: 150}, "300pt", "150pt", 400, 200},
		{"no bins", Histogram{Title: "No gaps yet"}, "576pt", "240pt", 768, 320},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkSVG(t, tt.h, tt.h.Title, tt.width, tt.height)
			checkPNG(t, tt.h, tt.pngW, tt.pngH)
		})
	}
}

// BenchmarkHistogramSVG draws a year of gaps in weekly bins with two
// markers, as the churn-window page does.
func BenchmarkHistogramSVG(b *testing.B) {
	values := make([]int, 100_000)
	for i := range values {
		values[i] = 1 + (i*7919)%400
	}
	edges, counts := BinDays(values, 365, false)
	h := Histogram{Title: "Gaps between order days", XLabel: "Gap (days)", YLabel: "Gaps", Edges: edges, Counts: counts,
		Markers: []Marker{{X: 41, Label: "90th percentile 41 d", Dashed: true}, {X: 45, Label: "X = 45 d"}}}
	for b.Loop() {
		if err := h.SVG(io.Discard); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkBinDays bins a million gap lengths, linearly and
// logarithmically.
func BenchmarkBinDays(b *testing.B) {
	values := make([]int, 1_000_000)
	for i := range values {
		values[i] = 1 + (i*7919)%1000
	}
	for _, logScale := range []bool{false, true} {
		b.Run(map[bool]string{false: "linear", true: "log"}[logScale], func(b *testing.B) {
			for b.Loop() {
				BinDays(values, 365, logScale)
			}
		})
	}
}

// BinDayCounts must bin exactly as BinDays does on the expanded values.
func TestBinDayCountsMatchesBinDays(t *testing.T) {
	perDay := []int{3, 0, 5, 1, 0, 0, 7, 2, 0, 11, 4, 0, 0, 0, 9, 6, 1, 0, 2, 8}
	var values []int
	for d, k := range perDay {
		for i := 0; i < k; i++ {
			values = append(values, d)
		}
	}
	for _, tt := range []struct {
		name    string
		maxDays int
		log     bool
	}{{"linear 12", 12, false}, {"linear 200", 200, false}, {"log 12", 12, true}, {"log 3", 3, true}} {
		t.Run(tt.name, func(t *testing.T) {
			we, wc := BinDays(values, tt.maxDays, tt.log)
			ge, gc := BinDayCounts(perDay, tt.maxDays, tt.log)
			if fmt.Sprint(we) != fmt.Sprint(ge) || fmt.Sprint(wc) != fmt.Sprint(gc) {
				t.Errorf("BinDayCounts = %v %v, want %v %v", ge, gc, we, wc)
			}
		})
	}
}
