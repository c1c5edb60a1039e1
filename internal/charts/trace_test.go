package charts

import (
	"bytes"
	"fmt"
	"image/color"
	"image/png"
	"io"
	"math"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/recorder"
)

// shape is one path a chart filled or stroked, with the style it was drawn
// in.
type shape struct {
	color  color.Color
	dashes []vg.Length
	width  vg.Length
	pts    []vg.Point // the path's points, without the closing segment
}

// placed is one string a chart drew, at the point FillString got (for
// unrotated text, the left end of its baseline).
type placed struct {
	text string
	at   vg.Point
}

// traced is everything a chart drew, as recorded by a vg canvas that keeps
// every call.
type traced struct {
	fills, strokes []shape
	texts          []placed
	// data is the data area: its left edge is the x axis' Min, its right
	// edge Max, its bottom the y axis' Min and its top Max.
	data vg.Rectangle
	plot *plot.Plot
}

// trace draws p on a recording canvas of the given size, exactly as SVG
// and PNG draw it.
func trace(t *testing.T, p *plot.Plot, width, height vg.Length) traced {
	t.Helper()
	rec := &recorder.Canvas{}
	c := frame(draw.NewCanvas(rec, width, height))
	p.Draw(c)
	tr := traced{data: p.DataCanvas(c).Rectangle, plot: p}

	type state struct {
		color  color.Color
		dashes []vg.Length
		width  vg.Length
	}
	cur := state{color: color.Black, width: 1}
	var stack []state
	points := func(path vg.Path) []vg.Point {
		var pts []vg.Point
		for _, pc := range path {
			if pc.Type == vg.MoveComp || pc.Type == vg.LineComp {
				pts = append(pts, pc.Pos)
			}
		}
		return pts
	}
	for _, a := range rec.Actions {
		switch a := a.(type) {
		case *recorder.SetColor:
			cur.color = a.Color
		case *recorder.SetLineDash:
			cur.dashes = slices.Clone(a.Dashes)
		case *recorder.SetLineWidth:
			cur.width = a.Width
		case *recorder.Push:
			stack = append(stack, cur)
		case *recorder.Pop:
			cur, stack = stack[len(stack)-1], stack[:len(stack)-1]
		case *recorder.Fill:
			tr.fills = append(tr.fills, shape{color: cur.color, pts: points(a.Path)})
		case *recorder.Stroke:
			tr.strokes = append(tr.strokes, shape{color: cur.color, dashes: cur.dashes, width: cur.width, pts: points(a.Path)})
		case *recorder.FillString:
			tr.texts = append(tr.texts, placed{text: a.String, at: a.Point})
		}
	}
	return tr
}

// at maps data coordinates to the canvas by proportion within the data
// area, given the axis ranges worked out by hand (linear axes).
func (tr traced) at(xlo, xhi, ylo, yhi, x, y float64) vg.Point {
	return vg.Point{
		X: tr.data.Min.X + vg.Length((x-xlo)/(xhi-xlo))*tr.data.Size().X,
		Y: tr.data.Min.Y + vg.Length((y-ylo)/(yhi-ylo))*tr.data.Size().Y,
	}
}

func (tr traced) filled(c color.Color) []shape {
	var out []shape
	for _, s := range tr.fills {
		if s.color == c {
			out = append(out, s)
		}
	}
	return out
}

func (tr traced) stroked(c color.Color) []shape {
	var out []shape
	for _, s := range tr.strokes {
		if s.color == c {
			out = append(out, s)
		}
	}
	return out
}

func (tr traced) drew(s string) (placed, bool) {
	for _, p := range tr.texts {
		if p.text == s {
			return p, true
		}
	}
	return placed{}, false
}

// bounds returns the smallest rectangle around pts.
func bounds(pts []vg.Point) vg.Rectangle {
	inf := vg.Length(math.Inf(1))
	r := vg.Rectangle{Min: vg.Point{X: inf, Y: inf}, Max: vg.Point{X: -inf, Y: -inf}}
	for _, p := range pts {
		r.Min.X, r.Min.Y = min(r.Min.X, p.X), min(r.Min.Y, p.Y)
		r.Max.X, r.Max.Y = max(r.Max.X, p.X), max(r.Max.Y, p.Y)
	}
	return r
}

const eps = 1e-6 // points: far below what a drawing could show

func near(a, b vg.Length) bool { return math.Abs(float64(a-b)) <= eps }

func samePoints(a, b []vg.Point) bool {
	return slices.EqualFunc(a, b, func(p, q vg.Point) bool { return near(p.X, q.X) && near(p.Y, q.Y) })
}

func fmtPoints(pts []vg.Point) string {
	var b strings.Builder
	for i, p := range pts {
		if i > 0 {
			b.WriteString(" ")
		}
		fmt.Fprintf(&b, "(%.2f,%.2f)", p.X, p.Y)
	}
	return b.String()
}

// tickLabels returns the labels of an axis' ticks that have one, in order.
func tickLabels(a plot.Axis) []string {
	var out []string
	for _, tk := range a.Tick.Marker.Ticks(a.Min, a.Max) {
		if tk.Label != "" {
			out = append(out, tk.Label)
		}
	}
	return out
}

// checkMarkerLines checks that each marker was drawn as a vertical line in
// markerColor across the whole data area at the canvas x wantX[i], dashed
// when the marker is, and that its label was drawn.
func checkMarkerLines(t *testing.T, tr traced, markers []Marker, wantX []vg.Length) {
	t.Helper()
	lines := tr.stroked(markerColor)
	if len(lines) != len(markers) {
		t.Fatalf("drew %d marker lines, want %d", len(lines), len(markers))
	}
	for i, m := range markers {
		want := []vg.Point{{X: wantX[i], Y: tr.data.Min.Y}, {X: wantX[i], Y: tr.data.Max.Y}}
		if !samePoints(lines[i].pts, want) {
			t.Errorf("marker %q drawn through %s, want %s", m.Label, fmtPoints(lines[i].pts), fmtPoints(want))
		}
		if dashed := len(lines[i].dashes) > 0; dashed != m.Dashed {
			t.Errorf("marker %q dashed = %v, want %v", m.Label, dashed, m.Dashed)
		}
		if _, ok := tr.drew(m.Label); m.Label != "" && !ok {
			t.Errorf("marker label %q not drawn; drew %v", m.Label, tr.texts)
		}
	}
}

// chart is what every chart type offers.
type chart interface {
	SVG(io.Writer) error
	PNG(io.Writer) error
}

// checkSVG checks that c writes a well-formed SVG document of the given
// size in points that names the font without embedding it, has no script
// and carries the escaped title.
func checkSVG(t *testing.T, c chart, title, width, height string) {
	t.Helper()
	var buf bytes.Buffer
	if err := c.SVG(&buf); err != nil {
		t.Fatalf("SVG: %v", err)
	}
	svg := buf.String()
	root := decodeXML(t, buf.Bytes())
	if root.Name.Local != "svg" {
		t.Fatalf("root element is <%s>, want <svg>", root.Name.Local)
	}
	if w, h := attr(root, "width"), attr(root, "height"); w != width || h != height {
		t.Errorf("svg size = %s × %s, want %s × %s", w, h, width, height)
	}
	if strings.Contains(strings.ToLower(svg), "<script") {
		t.Error("SVG contains a <script> element")
	}
	if !strings.Contains(svg, svgFontFamily) {
		t.Errorf("SVG does not name the font family %q", svgFontFamily)
	}
	if strings.Contains(svg, "Serif") || strings.Contains(svg, "@font-face") || strings.Contains(svg, "font/ttf") {
		t.Error("SVG uses the serif font or embeds a font")
	}
	if len(svg) > 128<<10 {
		t.Errorf("SVG is %d bytes; a chart should be well under 128 KiB", len(svg))
	}
	if !strings.Contains(svg, xmlEscape(t, title)) {
		t.Errorf("SVG lacks the escaped title %q", xmlEscape(t, title))
	}
}

// checkPNG checks that c writes a PNG image of the given size in pixels.
func checkPNG(t *testing.T, c chart, width, height int) {
	t.Helper()
	var buf bytes.Buffer
	if err := c.PNG(&buf); err != nil {
		t.Fatalf("PNG: %v", err)
	}
	img, err := png.Decode(&buf)
	if err != nil {
		t.Fatalf("png.Decode: %v", err)
	}
	if b := img.Bounds(); b.Dx() != width || b.Dy() != height {
		t.Errorf("PNG is %d×%d pixels, want %d×%d", b.Dx(), b.Dy(), width, height)
	}
}

// checkRefused checks that c's SVG and PNG both fail with the error want
// and write nothing.
func checkRefused(t *testing.T, c chart, want string) {
	t.Helper()
	for format, write := range map[string]func(io.Writer) error{"SVG": c.SVG, "PNG": c.PNG} {
		var buf bytes.Buffer
		err := write(&buf)
		if err == nil || err.Error() != want {
			t.Errorf("%s error = %v, want %q", format, err, want)
		}
		if buf.Len() != 0 {
			t.Errorf("%s wrote %d bytes before failing", format, buf.Len())
		}
	}
}
