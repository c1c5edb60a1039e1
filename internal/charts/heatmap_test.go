package charts

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/plot/palette/brewer"
	"gonum.org/v1/plot/vg"
)

var nan = math.NaN()

// retention is a small cohort grid by hand: the last cohort is young (two
// months) and the middle one has no value in month 2.
func retention() Heatmap {
	return Heatmap{
		Title:     "Retention by cohort",
		XLabel:    "Months since first order",
		YLabel:    "Cohort",
		RowLabels: []string{"2024-01", "2024-02", "2024-03"},
		ColLabels: []string{"0", "1", "2", "3"},
		Values: [][]float64{
			{1, 0.625, 0.4, 0.125},
			{1, 0.5, nan, 0.05},
			{1, 0.3},
		},
	}
}

// The scale's stops are ColorBrewer "Blues" with 9 classes as gonum
// v0.17.0's palette/brewer holds it, less the lightest class.
func TestHeatStopsAreBrewerBlues(t *testing.T) {
	p, err := brewer.GetPalette(brewer.TypeSequential, "Blues", 9)
	if err != nil {
		t.Fatal(err)
	}
	want := p.Colors()[1:]
	if len(heatStops) != len(want) {
		t.Fatalf("%d stops, want %d", len(heatStops), len(want))
	}
	for i, c := range want {
		r, g, b, a := c.RGBA()
		sr, sg, sb, sa := heatStops[i].RGBA()
		if r != sr || g != sg || b != sb || a != sa {
			t.Errorf("heatStops[%d] = %v, want %v", i, heatStops[i], c)
		}
	}
}

func TestShareColor(t *testing.T) {
	tests := []struct {
		name string
		v    float64
		want color.RGBA
	}{
		{"0 is the lightest stop", 0, color.RGBA{0xde, 0xeb, 0xf7, 0xff}},
		{"1 is the darkest stop", 1, color.RGBA{0x08, 0x30, 0x6b, 0xff}},
		{"1/7 is the second stop", 1.0 / 7, color.RGBA{0xc6, 0xdb, 0xef, 0xff}},
		// Halfway between #deebf7 and #c6dbef: (222+198)/2 = 210,
		// (235+219)/2 = 227, (247+239)/2 = 243.
		{"halfway to the second stop", 0.5 / 7, color.RGBA{210, 227, 243, 0xff}},
		// A quarter of the way from #08519c to #08306b: 81 − 33/4 = 72.75
		// → 73, 156 − 49/4 = 143.75 → 144.
		{"between the last two stops", 6.25 / 7, color.RGBA{8, 73, 144, 0xff}},
		{"below 0", -0.5, color.RGBA{0xde, 0xeb, 0xf7, 0xff}},
		{"above 1", 1.5, color.RGBA{0x08, 0x30, 0x6b, 0xff}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := shareColor(tt.v); got != tt.want {
				t.Errorf("shareColor(%v) = %v, want %v", tt.v, got, tt.want)
			}
		})
	}
}

// Contrast ratios worked out by hand with the WCAG 2.1 formulas (relative
// luminance of #333 = 0.0331, of #4292c6 = 0.258, of #2171b5 = 0.155).
func TestTextOn(t *testing.T) {
	tests := []struct {
		name string
		bg   color.Color
		want color.Color
	}{
		{"lightest", heatStops[0], ink},
		{"#4292c6: ink 3.70 beats white 3.41", heatStops[4], ink},
		{"#2171b5: white 5.13 beats ink 2.46", heatStops[5], color.White},
		{"darkest", heatStops[7], color.White},
		{"white", color.White, ink},
		{"black", color.Black, color.White},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := textOn(tt.bg); got != tt.want {
				t.Errorf("textOn(%v) = %v, want %v", tt.bg, got, tt.want)
			}
		})
	}
}

// Liberation Sans (metric-compatible with Arial) advances digits 1139/2048
// em and "%" 1821/2048 em (from memory), so "100%" at 8 points is 20.46
// points wide; its line is 1.149 em (ascent 0.905 + descent 0.212 plus the
// line gap, from memory), 9.2 points. With 2 points spare each side a cell
// needs 24.46 × 13.2 points.
func TestCellTextFits(t *testing.T) {
	tests := []struct {
		name string
		w, h vg.Length
		want bool
	}{
		{"roomy", 40, 20, true},
		{"just wide enough", 24.5, 20, true},
		{"too narrow", 24.4, 20, false},
		{"just tall enough", 40, 13.3, true},
		{"too low", 40, 12.9, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := cellTextFits(tt.w, tt.h); got != tt.want {
				t.Errorf("cellTextFits(%v, %v) = %v, want %v", tt.w, tt.h, got, tt.want)
			}
		})
	}
}

// Each cell with a value is a rectangle in its share's colour, one unit of
// each axis less the gap, the first row at the top; its whole percentage
// is written at its centre. NaN cells and the missing end of a short row
// are blank: no fill, no text.
func TestHeatmapPlotTheCells(t *testing.T) {
	h := retention()
	p, err := h.plot()
	if err != nil {
		t.Fatal(err)
	}
	tr := trace(t, p, DefaultWidth, DefaultHeight)
	rows, cols := 3, 4
	at := func(x, y float64) vg.Point {
		return tr.at(-0.5, float64(cols)-0.5, -0.5, float64(rows)-0.5, x, y)
	}

	var cells []shape
	for _, f := range tr.fills {
		if b := bounds(f.pts); b.Max.X <= tr.data.Max.X+eps {
			cells = append(cells, f)
		}
	}
	wantCells, wantTexts := 0, map[string]int{}
	for r := range rows {
		for c := range cols {
			v := nan
			if c < len(h.Values[r]) {
				v = h.Values[r][c]
			}
			y := float64(rows - 1 - r)
			centre := at(float64(c), y)
			var hit []shape
			for _, s := range cells {
				if b := bounds(s.pts); b.Min.X < centre.X && centre.X < b.Max.X && b.Min.Y < centre.Y && centre.Y < b.Max.Y {
					hit = append(hit, s)
				}
			}
			if math.IsNaN(v) {
				if len(hit) != 0 {
					t.Errorf("cell %s/%s has no value but was filled %v", h.RowLabels[r], h.ColLabels[c], hit[0].color)
				}
				continue
			}
			wantCells++
			if len(hit) != 1 {
				t.Fatalf("cell %s/%s: %d fills over its centre, want 1", h.RowLabels[r], h.ColLabels[c], len(hit))
			}
			lo, hi := at(float64(c)-0.5, y-0.5), at(float64(c)+0.5, y+0.5)
			want := []vg.Point{
				{X: lo.X + cellGap/2, Y: lo.Y + cellGap/2}, {X: hi.X - cellGap/2, Y: lo.Y + cellGap/2},
				{X: hi.X - cellGap/2, Y: hi.Y - cellGap/2}, {X: lo.X + cellGap/2, Y: hi.Y - cellGap/2},
			}
			if !samePoints(hit[0].pts, want) {
				t.Errorf("cell %s/%s drawn through %s, want %s", h.RowLabels[r], h.ColLabels[c], fmtPoints(hit[0].pts), fmtPoints(want))
			}
			if hit[0].color != shareColor(v) {
				t.Errorf("cell %s/%s filled %v, want %v", h.RowLabels[r], h.ColLabels[c], hit[0].color, shareColor(v))
			}
			text := formatPercent(v, 0)
			wantTexts[text]++
			found := false
			for _, pl := range tr.texts {
				// FillString gets the left end of the baseline: centred
				// text has its middle within a point of the cell's centre.
				if pl.text == text && math.Abs(float64(pl.at.X+cellStyle().Width(text)/2-centre.X)) < 1 &&
					math.Abs(float64(pl.at.Y-centre.Y)) < float64(cellStyle().Height(text)/2) {
					found = true
				}
			}
			if !found {
				t.Errorf("cell %s/%s: %q not written at its centre %v", h.RowLabels[r], h.ColLabels[c], text, centre)
			}
		}
	}
	if len(cells) != wantCells {
		t.Errorf("filled %d cells, want %d", len(cells), wantCells)
	}
	// Every percentage drawn inside the grid belongs to a cell with a value.
	gotTexts := map[string]int{}
	for _, pl := range tr.texts {
		if strings.HasSuffix(pl.text, "%") && pl.at.X < tr.data.Max.X {
			gotTexts[pl.text]++
		}
	}
	if fmt.Sprint(gotTexts) != fmt.Sprint(wantTexts) {
		t.Errorf("percentages in the grid = %v, want %v", gotTexts, wantTexts)
	}

	if got := tickLabels(p.Y); !slices.Equal(got, h.RowLabels) {
		t.Errorf("y tick labels = %q, want %q", got, h.RowLabels)
	}
	for _, tk := range p.Y.Tick.Marker.Ticks(p.Y.Min, p.Y.Max) {
		if tk.Label == "2024-01" && tk.Value != 2 {
			t.Errorf("first cohort at y = %v, want 2 (the top row)", tk.Value)
		}
	}
	if got := tickLabels(p.X); !slices.Equal(got, h.ColLabels) {
		t.Errorf("x tick labels = %q, want %q", got, h.ColLabels)
	}
}

// The key is a bar right of the grid, as high as the grid, from the
// lightest colour at the bottom to the darkest at the top, labelled 0 % to
// 100 % beside it.
func TestHeatmapKey(t *testing.T) {
	p, err := retention().plot()
	if err != nil {
		t.Fatal(err)
	}
	tr := trace(t, p, DefaultWidth, DefaultHeight)
	var strips []shape
	for _, f := range tr.fills {
		if bounds(f.pts).Min.X >= tr.data.Max.X {
			strips = append(strips, f)
		}
	}
	if len(strips) != keyStrips {
		t.Fatalf("key has %d strips, want %d", len(strips), keyStrips)
	}
	first, last := bounds(strips[0].pts), bounds(strips[len(strips)-1].pts)
	if !near(first.Min.X, tr.data.Max.X+keyGap) || !near(first.Max.X-first.Min.X, keyBar) {
		t.Errorf("key bar from x = %v to %v, want %v to %v", first.Min.X, first.Max.X, tr.data.Max.X+keyGap, tr.data.Max.X+keyGap+keyBar)
	}
	if !near(first.Min.Y, tr.data.Min.Y) || !near(last.Max.Y, tr.data.Max.Y) {
		t.Errorf("key bar from y = %v to %v, want the grid's %v to %v", first.Min.Y, last.Max.Y, tr.data.Min.Y, tr.data.Max.Y)
	}
	if want := shareColor(0.5 / keyStrips); strips[0].color != want {
		t.Errorf("bottom strip %v, want %v", strips[0].color, want)
	}
	if want := shareColor(1 - 0.5/keyStrips); strips[len(strips)-1].color != want {
		t.Errorf("top strip %v, want %v", strips[len(strips)-1].color, want)
	}
	for k, label := range []string{"0%", "25%", "50%", "75%", "100%"} {
		var pl *placed
		for i := range tr.texts {
			if tr.texts[i].text == label && tr.texts[i].at.X > tr.data.Max.X {
				pl = &tr.texts[i]
			}
		}
		if pl == nil {
			t.Errorf("key label %q not drawn", label)
			continue
		}
		y := tr.data.Min.Y + vg.Length(float64(k)/4)*tr.data.Size().Y
		if math.Abs(float64(pl.at.Y-y)) > float64(keyLabelStyle().Height(label)) {
			t.Errorf("key label %q at y = %v, want about %v", label, pl.at.Y, y)
		}
	}
	// The key and its labels fit on the chart.
	for _, pl := range tr.texts {
		if right := pl.at.X + keyLabelStyle().Width(pl.text); pl.at.X > tr.data.Max.X && right > DefaultWidth {
			t.Errorf("key label %q ends at %v, past the chart's width %v", pl.text, right, DefaultWidth)
		}
	}
}

// Percentages are written in every cell or in none: in none when a cell is
// too small for "100%" (see TestCellTextFits).
func TestHeatmapCellTextRule(t *testing.T) {
	grid := func(rows, cols int) Heatmap {
		h := Heatmap{Title: "Retention", XLabel: "Months since first order", YLabel: "Cohort"}
		for c := range cols {
			h.ColLabels = append(h.ColLabels, fmt.Sprint(c))
		}
		for r := range rows {
			h.RowLabels = append(h.RowLabels, fmt.Sprintf("%d-%02d", 2022+r/12, r%12+1))
			row := make([]float64, cols-min(r, cols-1)) // a triangle, as cohorts age
			for c := range row {
				row[c] = 0.5
			}
			h.Values = append(h.Values, row)
		}
		return h
	}
	tests := []struct {
		name string
		h    Heatmap
		want bool
	}{
		{"18 months of 12 cohorts at the default size", grid(12, 18), true},
		{"24 months at the default size", grid(12, 24), false},
		{"24 months on a wider chart", func() Heatmap { h := grid(12, 24); h.Width = 720; return h }(), true},
		{"24 cohorts at the default size", grid(24, 12), false},
		{"24 cohorts on a taller chart", func() Heatmap { h := grid(24, 12); h.Height = 480; return h }(), true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p, err := tt.h.plot()
			if err != nil {
				t.Fatal(err)
			}
			w, h := chartSize(tt.h.Width, tt.h.Height)
			tr := trace(t, p, w, h)
			cells := 0
			for _, row := range tt.h.Values {
				cells += len(row)
			}
			written := 0
			for _, pl := range tr.texts {
				if pl.text == "50%" && pl.at.X < tr.data.Max.X {
					written++
				}
			}
			want := 0
			if tt.want {
				want = cells
			}
			if written != want {
				t.Errorf("wrote %d of %d cells' percentages, want %d", written, cells, want)
			}
		})
	}
}

func TestHeatmapRows(t *testing.T) {
	tests := []struct {
		name string
		h    Heatmap
		want []SeriesRow
	}{
		{
			name: "cohorts with a gap and a short row",
			h:    retention(),
			want: []SeriesRow{
				{Label: "2024-01", Values: []float64{1, 0.625, 0.4, 0.125}, Texts: []string{"100%", "62.5%", "40%", "12.5%"}},
				{Label: "2024-02", Values: []float64{1, 0.5, nan, 0.05}, Texts: []string{"100%", "50%", "", "5%"}},
				{Label: "2024-03", Values: []float64{1, 0.3, nan, nan}, Texts: []string{"100%", "30%", "", ""}},
			},
		},
		{
			name: "rounded to one decimal",
			h:    Heatmap{RowLabels: []string{"a"}, ColLabels: []string{"0"}, Values: [][]float64{{0.12345}}},
			want: []SeriesRow{{Label: "a", Values: []float64{0.12345}, Texts: []string{"12.3%"}}},
		},
		{name: "no cohorts", h: Heatmap{ColLabels: []string{"0"}}, want: []SeriesRow{}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := tt.h.Rows()
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

func TestHeatmapRefusesBadGrids(t *testing.T) {
	rows, cols := []string{"2024-01", "2024-02"}, []string{"0", "1"}
	tests := []struct {
		name string
		h    Heatmap
		want string
	}{
		{"fewer labels than rows", Heatmap{Title: "R", RowLabels: rows[:1], ColLabels: cols, Values: [][]float64{{1}, {1}}},
			`heatmap "R": 1 row labels for 2 rows of values`},
		{"a row too long", Heatmap{Title: "R", RowLabels: rows, ColLabels: cols, Values: [][]float64{{1}, {1, 0.5, 0.2}}},
			`heatmap "R": row "2024-02" has 3 values for 2 columns`},
		{"above 1", Heatmap{Title: "R", RowLabels: rows, ColLabels: cols, Values: [][]float64{{1, 1.25}, {1}}},
			`heatmap "R": row "2024-01", column "1" is 1.25, want a share from 0 to 1 (or NaN for none)`},
		{"negative", Heatmap{Title: "R", RowLabels: rows, ColLabels: cols, Values: [][]float64{{1}, {-0.1}}},
			`heatmap "R": row "2024-02", column "0" is -0.1, want a share from 0 to 1 (or NaN for none)`},
		{"infinite", Heatmap{Title: "R", RowLabels: rows, ColLabels: cols, Values: [][]float64{{math.Inf(1)}, {1}}},
			`heatmap "R": row "2024-01", column "0" is +Inf, want a share from 0 to 1 (or NaN for none)`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkRefused(t, tt.h, tt.want)
		})
	}
}

func TestHeatmapFiles(t *testing.T) {
	own := retention()
	own.Title, own.Width, own.Height = "Retention <by> cohort & month", 300, 150
	tests := []struct {
		name          string
		h             Heatmap
		width, height string
		pngW, pngH    int
		texts         []string // in the SVG besides the title
	}{
		{"default size", retention(), "576pt", "240pt", 768, 320,
			[]string{"2024-01", "2024-03", "Months since first order", "63%", "40%", "13%", "5%", "30%", "100%"}},
		{"own size", own, "300pt", "150pt", 400, 200, []string{"2024-02"}},
		{"no cohorts", Heatmap{Title: "No orders yet", ColLabels: []string{"0", "1"}}, "576pt", "240pt", 768, 320, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkSVG(t, tt.h, tt.h.Title, tt.width, tt.height)
			checkPNG(t, tt.h, tt.pngW, tt.pngH)
			var buf bytes.Buffer
			if err := tt.h.SVG(&buf); err != nil {
				t.Fatal(err)
			}
			for _, s := range tt.texts {
				if !strings.Contains(buf.String(), ">"+xmlEscape(t, s)+"<") {
					t.Errorf("SVG lacks the text %q", s)
				}
			}
		})
	}
}
