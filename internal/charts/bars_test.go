package charts

import (
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"image/color"
	"image/png"
	"io"
	"math"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/recorder"
)

// months returns n month labels from 2023-01 on.
func months(n int) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = fmt.Sprintf("%04d-%02d", 2023+i/12, i%12+1)
	}
	return out
}

// seq returns the indices from, from+step, … below to.
func seq(from, to, step int) []int {
	var out []int
	for i := from; i < to; i += step {
		out = append(out, i)
	}
	return out
}

func TestTickLabels(t *testing.T) {
	tests := []struct {
		name string
		n    int
		want []int
	}{
		{"none", 0, []int{}},
		{"6 months: all", 6, []int{0, 1, 2, 3, 4, 5}},
		{"12 months: all", 12, seq(0, 12, 1)},
		// 13 labels are one too many; every 2nd leaves 0, 2, …, 12 = 7.
		{"13 months: every 2nd", 13, []int{0, 2, 4, 6, 8, 10, 12}},
		// 24/2 = 12 fits.
		{"24 months: every 2nd", 24, []int{0, 2, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22}},
		// 60/2 = 30, 60/3 = 20, 60/4 = 15 are too many; 60/6 = 10 fits.
		{"60 months: every 6th", 60, []int{0, 6, 12, 18, 24, 30, 36, 42, 48, 54}},
		// 144/12 = 12 fits exactly.
		{"144 months: every 12th", 144, seq(0, 144, 12)},
		// 200/12 = 17 is too many; every 24th leaves 0, 24, …, 192 = 9.
		{"200 months: every 24th", 200, []int{0, 24, 48, 72, 96, 120, 144, 168, 192}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := Bars{Labels: months(tt.n)}.TickLabels()
			if !slices.Equal(got, tt.want) {
				t.Errorf("TickLabels() of %d labels = %v, want %v", tt.n, got, tt.want)
			}
		})
	}
}

// drawing is what a chart drew, as recorded by a vg canvas that keeps every
// call: the accent-coloured filled rectangles (the bars) and the strings.
type drawing struct {
	bars    []vg.Rectangle // bounds of each bar, in drawing order
	strings []string
	// trX and trY map data to canvas coordinates as the chart laid it out.
	trX, trY func(float64) vg.Length
}

// record draws b on a recording canvas of b's size, exactly as SVG and PNG
// draw it.
func record(t *testing.T, b Bars) drawing {
	t.Helper()
	p, err := b.plot()
	if err != nil {
		t.Fatalf("plot: %v", err)
	}
	rec := &recorder.Canvas{}
	w, h := b.size()
	c := frame(draw.NewCanvas(rec, w, h))
	p.Draw(c)
	dc := p.DataCanvas(c)
	var d drawing
	d.trX, d.trY = p.Transforms(&dc)

	var col color.Color = color.Black
	var stack []color.Color
	for _, a := range rec.Actions {
		switch a := a.(type) {
		case *recorder.SetColor:
			col = a.Color
		case *recorder.Push:
			stack = append(stack, col)
		case *recorder.Pop:
			col, stack = stack[len(stack)-1], stack[:len(stack)-1]
		case *recorder.Fill:
			if col != color.Color(Accent) {
				continue
			}
			inf := vg.Length(math.Inf(1))
			r := vg.Rectangle{Min: vg.Point{X: inf, Y: inf}, Max: vg.Point{X: -inf, Y: -inf}}
			for _, pc := range a.Path {
				if pc.Type == vg.CloseComp {
					continue
				}
				r.Min.X, r.Min.Y = min(r.Min.X, pc.Pos.X), min(r.Min.Y, pc.Pos.Y)
				r.Max.X, r.Max.Y = max(r.Max.X, pc.Pos.X), max(r.Max.Y, pc.Pos.Y)
			}
			d.bars = append(d.bars, r)
		case *recorder.FillString:
			d.strings = append(d.strings, a.String)
		}
	}
	return d
}

// The bars drawn are the series given: bar i is centred on category i of
// the axis and reaches from the y axis' 0 to its value.
func TestBarsPlotTheSeries(t *testing.T) {
	tests := []struct {
		name   string
		bars   Bars
		yTicks []string // the y-axis labels, bottom to top, worked out by hand
	}{
		{
			// Largest 12: 12/5 = 2.4 → step 5 → 0, 5, 10, 15.
			name:   "six months of counts",
			bars:   Bars{Title: "Orders", Labels: months(6), Values: []float64{0, 3, 7, 12, 5, 1}},
			yTicks: []string{"0", "5", "10", "15"},
		},
		{
			// Largest 30,500: /5 = 6,100 → step 10,000 → 0 … 40,000.
			name: "24 months of thousands",
			bars: Bars{Title: "Orders", Labels: months(24), Values: []float64{
				12000, 30500, 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 18, 19, 20, 21}},
			yTicks: []string{"0", "10,000", "20,000", "30,000", "40,000"},
		},
		{
			// Largest 0.5: /5 = 0.1 → step 0.1, not whole numbers.
			name:   "shares",
			bars:   Bars{Title: "Share", Labels: []string{"a", "b"}, Values: []float64{0.25, 0.5}},
			yTicks: []string{"0", "0.1", "0.2", "0.3", "0.4", "0.5"},
		},
		{
			// Largest 1: /5 = 0.2, but counts step by at least 1 → 0, 1.
			name:   "a single order",
			bars:   Bars{Title: "Orders", Labels: []string{"2024-03"}, Values: []float64{1}},
			yTicks: []string{"0", "1"},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			d := record(t, tt.bars)
			if len(d.bars) != len(tt.bars.Values) {
				t.Fatalf("drew %d bars, want %d", len(d.bars), len(tt.bars.Values))
			}
			const eps = 1e-9
			zero := d.trY(0)
			for i, r := range d.bars {
				v := tt.bars.Values[i]
				if centre := (r.Min.X + r.Max.X) / 2; math.Abs(float64(centre-d.trX(float64(i)))) > eps {
					t.Errorf("bar %d (%s) centred at x = %v, want %v (category %d)", i, tt.bars.Labels[i], centre, d.trX(float64(i)), i)
				}
				if math.Abs(float64(r.Min.Y-zero)) > eps {
					t.Errorf("bar %d (%s) starts at y = %v, want %v (the value 0)", i, tt.bars.Labels[i], r.Min.Y, zero)
				}
				if math.Abs(float64(r.Max.Y-d.trY(v))) > eps {
					t.Errorf("bar %d (%s) reaches y = %v, want %v (the value %v)", i, tt.bars.Labels[i], r.Max.Y, d.trY(v), v)
				}
			}

			p, err := tt.bars.plot()
			if err != nil {
				t.Fatal(err)
			}
			if p.Y.Min != 0 {
				t.Errorf("y axis starts at %v, want 0", p.Y.Min)
			}
			var yLabels []string
			for _, tk := range p.Y.Tick.Marker.Ticks(p.Y.Min, p.Y.Max) {
				yLabels = append(yLabels, tk.Label)
			}
			if !slices.Equal(yLabels, tt.yTicks) {
				t.Errorf("y tick labels = %q, want %q", yLabels, tt.yTicks)
			}

			// The x labels drawn are exactly those TickLabels names.
			shown := tt.bars.TickLabels()
			for i, l := range tt.bars.Labels {
				drawn := slices.Contains(d.strings, l)
				if want := slices.Contains(shown, i); drawn != want {
					t.Errorf("label %q drawn = %v, want %v (shown: %v)", l, drawn, want, shown)
				}
			}
			if !slices.Contains(d.strings, tt.bars.Title) {
				t.Errorf("title %q not drawn; drew %q", tt.bars.Title, d.strings)
			}
		})
	}
}

func TestValueTicks(t *testing.T) {
	tests := []struct {
		name     string
		lo, hi   float64
		integers bool
		want     []string
	}{
		{"all zero", 0, 0, true, []string{"0", "1"}},
		// 7/5 = 1.4 → 2.
		{"up to 7", 0, 7, true, []string{"0", "2", "4", "6", "8"}},
		// 10/5 = 2 exactly: ticks end at 10.
		{"up to 10", 0, 10, true, []string{"0", "2", "4", "6", "8", "10"}},
		// 1,234,567/5 = 246,913 → 500,000.
		{"a million", 0, 1234567, true, []string{"0", "500,000", "1,000,000", "1,500,000"}},
		// A range from −3 to 4: 7/5 → 2, from −4 to 4.
		{"negative", -3, 4, true, []string{"-4", "-2", "0", "2", "4"}},
		// 0.03/5 = 0.006 → 0.01.
		{"small fractions", 0, 0.03, false, []string{"0", "0.01", "0.02", "0.03"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var got []string
			for _, tk := range valueTicks(tt.lo, tt.hi, tt.integers) {
				got = append(got, tk.Label)
			}
			if !slices.Equal(got, tt.want) {
				t.Errorf("valueTicks(%v, %v, %v) = %q, want %q", tt.lo, tt.hi, tt.integers, got, tt.want)
			}
		})
	}
}

func TestFormatNumber(t *testing.T) {
	tests := []struct {
		name     string
		v        float64
		decimals int
		want     string
	}{
		{"zero", 0, -1, "0"},
		{"negative zero", math.Copysign(0, -1), 0, "0"},
		{"hundreds", 999, -1, "999"},
		{"thousands", 1000, -1, "1,000"},
		{"millions", 1234567, 0, "1,234,567"},
		{"negative thousands with a fraction", -1234.5, -1, "-1,234.5"},
		{"fixed decimals", 0.30000000000000004, 1, "0.3"},
		{"a share", 2.0 / 3, -1, "0.6666666666666666"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := formatNumber(tt.v, tt.decimals); got != tt.want {
				t.Errorf("formatNumber(%v, %d) = %q, want %q", tt.v, tt.decimals, got, tt.want)
			}
		})
	}
}

func TestRows(t *testing.T) {
	b := Bars{Labels: []string{"2024-01", "2024-02", "2024-03"}, Values: []float64{1500, 0, 0.5}}
	want := []Row{
		{Label: "2024-01", Value: 1500, Text: "1,500"},
		{Label: "2024-02", Value: 0, Text: "0"},
		{Label: "2024-03", Value: 0.5, Text: "0.5"},
	}
	if got := b.Rows(); !slices.Equal(got, want) {
		t.Errorf("Rows() = %+v, want %+v", got, want)
	}
}

// Month labels fit their share of the axis; long labels are turned.
func TestLabelRotation(t *testing.T) {
	tests := []struct {
		name   string
		labels []string
		turned bool
	}{
		{"6 months", months(6), false},
		{"60 months, every 6th shown", months(60), false},
		// 12 labels of about 100 points on about 516 points of axis.
		{"12 long names", slices.Repeat([]string{"customers who ordered once"}, 12), true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p, err := Bars{Labels: tt.labels, Values: make([]float64, len(tt.labels))}.plot()
			if err != nil {
				t.Fatal(err)
			}
			if got := p.X.Tick.Label.Rotation != 0; got != tt.turned {
				t.Errorf("labels turned = %v (rotation %v), want %v", got, p.X.Tick.Label.Rotation, tt.turned)
			}
		})
	}
}

func TestBarsSVG(t *testing.T) {
	tests := []struct {
		name          string
		bars          Bars
		width, height string
	}{
		{"default size", Bars{Title: "Orders <per> month & day", Labels: months(24), Values: make([]float64, 24)}, "576pt", "240pt"},
		{"own size", Bars{Title: "Orders", Labels: months(3), Values: []float64{1, 2, 3}, Width: 300, Height: 150}, "300pt", "150pt"},
		{"no categories", Bars{Title: "Nothing yet"}, "576pt", "240pt"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var buf bytes.Buffer
			if err := tt.bars.SVG(&buf); err != nil {
				t.Fatalf("SVG: %v", err)
			}
			svg := buf.String()
			root := decodeXML(t, buf.Bytes())
			if root.Name.Local != "svg" {
				t.Fatalf("root element is <%s>, want <svg>", root.Name.Local)
			}
			if w, h := attr(root, "width"), attr(root, "height"); w != tt.width || h != tt.height {
				t.Errorf("svg size = %s × %s, want %s × %s", w, h, tt.width, tt.height)
			}
			if strings.Contains(strings.ToLower(svg), "<script") {
				t.Error("SVG contains a <script> element")
			}
			if !strings.Contains(svg, svgFontFamily) {
				t.Errorf("SVG does not name the font family %q", svgFontFamily)
			}
			if strings.Contains(svg, "Serif") || strings.Contains(svg, "@font-face") {
				t.Error("SVG uses the serif font or embeds a font")
			}
			if len(svg) > 64<<10 {
				t.Errorf("SVG is %d bytes; a bar chart should be well under 64 KiB", len(svg))
			}
			if !strings.Contains(svg, xmlEscape(t, tt.bars.Title)) {
				t.Errorf("SVG lacks the escaped title %q", xmlEscape(t, tt.bars.Title))
			}
		})
	}
}

// decodeXML decodes every token of doc and returns its root element.
func decodeXML(t *testing.T, doc []byte) xml.StartElement {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(doc))
	var root *xml.StartElement
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("SVG is not well-formed XML: %v", err)
		}
		if se, ok := tok.(xml.StartElement); ok && root == nil {
			se = se.Copy()
			root = &se
		}
	}
	if root == nil {
		t.Fatal("SVG has no element")
	}
	return *root
}

func attr(se xml.StartElement, name string) string {
	for _, a := range se.Attr {
		if a.Name.Local == name {
			return a.Value
		}
	}
	return ""
}

func xmlEscape(t *testing.T, s string) string {
	t.Helper()
	var b strings.Builder
	if err := xml.EscapeText(&b, []byte(s)); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

func TestBarsPNG(t *testing.T) {
	tests := []struct {
		name       string
		bars       Bars
		wantW, wth int // pixels: points × 96/72
	}{
		{"default 576×240 points", Bars{Labels: months(6), Values: []float64{1, 2, 3, 4, 5, 6}}, 768, 320},
		{"300×150 points", Bars{Labels: months(2), Values: []float64{1, 2}, Width: 300, Height: 150}, 400, 200},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var buf bytes.Buffer
			if err := tt.bars.PNG(&buf); err != nil {
				t.Fatalf("PNG: %v", err)
			}
			img, err := png.Decode(&buf)
			if err != nil {
				t.Fatalf("png.Decode: %v", err)
			}
			if b := img.Bounds(); b.Dx() != tt.wantW || b.Dy() != tt.wth {
				t.Errorf("PNG is %d×%d pixels, want %d×%d", b.Dx(), b.Dy(), tt.wantW, tt.wth)
			}
		})
	}
}

func TestBarsRefuseBadSeries(t *testing.T) {
	tests := []struct {
		name string
		bars Bars
		want string
	}{
		{"fewer labels than values", Bars{Title: "Orders", Labels: months(2), Values: []float64{1, 2, 3}}, `bar chart "Orders": 2 labels for 3 values`},
		{"NaN", Bars{Title: "Orders", Labels: months(2), Values: []float64{1, math.NaN()}}, `bar chart "Orders": value of "2023-02" is NaN`},
		{"infinity", Bars{Title: "Orders", Labels: months(1), Values: []float64{math.Inf(1)}}, `bar chart "Orders": value of "2023-01" is +Inf`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			for format, write := range map[string]func(io.Writer) error{"SVG": tt.bars.SVG, "PNG": tt.bars.PNG} {
				var buf bytes.Buffer
				err := write(&buf)
				if err == nil || err.Error() != tt.want {
					t.Errorf("%s error = %v, want %q", format, err, tt.want)
				}
				if buf.Len() != 0 {
					t.Errorf("%s wrote %d bytes before failing", format, buf.Len())
				}
			}
		})
	}
}

// BenchmarkBarsSVG draws five years of months, the largest chart a page
// shows.
func BenchmarkBarsSVG(b *testing.B) {
	bars := Bars{Title: "Orders per month", Labels: months(60), Values: make([]float64, 60)}
	for i := range bars.Values {
		bars.Values[i] = float64(1000 + 37*i)
	}
	for b.Loop() {
		if err := bars.SVG(io.Discard); err != nil {
			b.Fatal(err)
		}
	}
}
