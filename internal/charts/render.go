package charts

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// This file holds what every chart shares: writing SVG and PNG, axis
// ticks, the marker lines and the small plotters the charts draw with.

var (
	// bandColor fills a confidence band: the accent at 20 % on white,
	// opaque so that SVG and PNG show the same shade.
	bandColor = color.RGBA{R: 0xd2, G: 0xdf, B: 0xe8, A: 0xff}
	// markerColor draws marker lines and their labels, a grey a little
	// lighter than the axes so that a marker never reads as an axis.
	markerColor = color.RGBA{R: 0x55, G: 0x55, B: 0x55, A: 0xff}
	// haloColor is the translucent white behind a marker's label, so that
	// the label stays legible over bars and lines.
	haloColor = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xd9}
	// palette colours the series of a line chart in turn: the accent, then
	// an orange that stays distinct from it for colour-blind readers, then
	// green, purple and grey.
	palette = []color.Color{
		Accent,
		color.RGBA{R: 0xc2, G: 0x65, B: 0x1e, A: 0xff},
		color.RGBA{R: 0x4d, G: 0x8a, B: 0x3a, A: 0xff},
		color.RGBA{R: 0x6b, G: 0x4c, B: 0x9a, A: 0xff},
		color.RGBA{R: 0x77, G: 0x77, B: 0x77, A: 0xff},
	}
)

const (
	curveWidth vg.Length = 1.5 // points: the width of curves and series
	markerGap  vg.Length = 3   // points between a marker line and its label
)

var (
	markerDashes = []vg.Length{4, 3}
	seriesDashes = []vg.Length{6, 3}
)

// Marker is a vertical line across a chart at X, in the x axis' unit, with
// a label beside its top, such as "90th percentile 41 d" or "X = 45 d".
type Marker struct {
	X      float64
	Label  string // may be empty: the line alone
	Dashed bool
}

// writeSVG draws p on an SVG canvas of the given size and writes it to w
// in one Write. what names the chart in errors ("histogram \"Gaps\"").
func writeSVG(w io.Writer, p *plot.Plot, width, height vg.Length, what func() string) error {
	c := vgsvg.New(width, height)
	p.Draw(frame(draw.New(c)))
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return fmt.Errorf("write %s as svg: %w", what(), err)
	}
	out := bytes.ReplaceAll(buf.Bytes(), []byte("font-family:Liberation Sans;"), []byte(svgFontFamily))
	if _, err := w.Write(out); err != nil {
		return fmt.Errorf("write %s as svg: %w", what(), err)
	}
	return nil
}

// writePNG draws p on an image of the given size at 96 dots per inch and
// writes it to w as PNG.
func writePNG(w io.Writer, p *plot.Plot, width, height vg.Length, what func() string) error {
	c := vgimg.NewWith(vgimg.UseWH(width, height), vgimg.UseDPI(pngDPI))
	p.Draw(frame(draw.New(c)))
	if _, err := (vgimg.PngCanvas{Canvas: c}).WriteTo(w); err != nil {
		return fmt.Errorf("write %s as png: %w", what(), err)
	}
	return nil
}

// chartSize returns w and h, or the default size where they are zero or
// negative.
func chartSize(w, h vg.Length) (vg.Length, vg.Length) {
	if w <= 0 {
		w = DefaultWidth
	}
	if h <= 0 {
		h = DefaultHeight
	}
	return w, h
}

// newPlot returns a styled plot with the given title and axis labels and a
// grid of horizontal lines at the y ticks.
func newPlot(title, xLabel, yLabel string) *plot.Plot {
	p := plot.New()
	style(p)
	p.Title.Text = title
	p.X.Label.Text = xLabel
	p.Y.Label.Text = yLabel
	grid := plotter.NewGrid()
	grid.Vertical.Color = nil
	grid.Horizontal.Color = gridColor
	p.Add(grid)
	return p
}

// finite reports whether v is neither NaN nor infinite.
func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// linearTicks returns labelled ticks at the multiples of a step of 1, 2 or
// 5 times a power of ten that lie in [lo, hi], about eight of them; the
// axis itself keeps its range (a histogram's x axis ends at its last edge,
// not at the next round number).
func linearTicks(lo, hi float64) []plot.Tick {
	if !(hi > lo) {
		return []plot.Tick{{Value: lo, Label: formatNumber(lo, -1)}}
	}
	step := niceStep((hi - lo) / 8)
	decimals := max(0, -int(math.Floor(math.Log10(step))))
	var ticks []plot.Tick
	for k := math.Ceil(lo/step - 1e-9); k*step <= hi+step*1e-9; k++ {
		v := k * step
		ticks = append(ticks, plot.Tick{Value: v, Label: formatNumber(v, decimals)})
	}
	return ticks
}

// logTicks returns ticks for a logarithmic axis over [lo, hi] (lo > 0): 1,
// 2 and 5 times each power of ten in range, all labelled when there are at
// most ten of them, otherwise only the powers of ten labelled and the rest
// minor ticks.
func logTicks(lo, hi float64) []plot.Tick {
	if !(lo > 0) || !(hi >= lo) || !finite(hi) {
		return nil
	}
	var ticks []plot.Tick
	for e := int(math.Floor(math.Log10(lo))); e <= int(math.Ceil(math.Log10(hi))); e++ {
		for _, m := range []float64{1, 2, 5} {
			v := m * math.Pow10(e)
			if v < lo*(1-1e-9) || v > hi*(1+1e-9) {
				continue
			}
			ticks = append(ticks, plot.Tick{Value: v, Label: formatNumber(v, max(0, -e))})
		}
	}
	if len(ticks) > 10 {
		for i := range ticks {
			if m := ticks[i].Value / math.Pow10(int(math.Floor(math.Log10(ticks[i].Value)+1e-9))); math.Abs(m-1) > 1e-9 {
				ticks[i].Label = ""
			}
		}
	}
	return ticks
}

// shareTicks are the ticks of a y axis of shares from 0 to 1 written as
// percentages.
func shareTicks() []plot.Tick {
	ticks := make([]plot.Tick, 5)
	for i := range ticks {
		v := float64(i) / 4
		ticks[i] = plot.Tick{Value: v, Label: formatPercent(v, 0)}
	}
	return ticks
}

// formatPercent writes the share v as a percentage with the given number of
// decimals, dropped when the percentage is whole: 0.625 → "62.5%" (1), 0.5
// → "50%", 0.07 → "7%" (1).
func formatPercent(v float64, decimals int) string {
	scale := math.Pow10(decimals)
	return formatNumber(math.Round(v*100*scale)/scale, decimals) + "%"
}

// percentDecimals returns the decimals that tell ticks step apart when
// written as percentages: a step of 0.1 (10 %) needs none, 0.005 one.
func percentDecimals(step float64) int {
	return max(0, -int(math.Floor(math.Log10(step*100)+1e-9)))
}

// checkMarkers returns an error naming the first marker whose X is not a
// finite number within [lo, hi], the chart's x axis.
func checkMarkers(markers []Marker, lo, hi float64) error {
	for _, m := range markers {
		if !finite(m.X) {
			return fmt.Errorf("marker %q at x = %v", m.Label, m.X)
		}
		if m.X < lo || m.X > hi {
			return fmt.Errorf("marker %q at x = %s is outside the x axis (%s to %s)",
				m.Label, formatNumber(m.X, -1), formatNumber(lo, -1), formatNumber(hi, -1))
		}
	}
	return nil
}

// overlay draws what goes over the data: marker lines across the data
// area, then their labels, each beside the top of its line (to the right,
// or to the left when it would run past the right edge), then the legend
// at the top right below the labels. Labels that would overlap are stacked
// in rows downwards, each in the first row where it fits, in the order
// given. Labels and legend sit on a translucent white halo so that they
// stay legible over bars, lines and each other's marker lines.
type overlay struct {
	markers []Marker
	legend  []legendEntry
}

// legendEntry is one series in a legend: its name beside a short line in
// its style.
type legendEntry struct {
	name  string
	style draw.LineStyle
}

// markerLabel is where a marker's label goes: the left end of its text at
// left, the top of its row at top.
type markerLabel struct {
	text      string
	left, top vg.Length
	width     vg.Length
	row       int
}

func labelStyle() text.Style {
	return text.Style{
		Color:   markerColor,
		Font:    font.From(sans, 9),
		XAlign:  draw.XLeft,
		YAlign:  draw.YTop,
		Handler: plot.DefaultTextHandler,
	}
}

func legendStyle() text.Style {
	sty := labelStyle()
	sty.Color = ink
	sty.Font = font.From(sans, 10)
	return sty
}

const legendLine vg.Length = 20 // points: the length of a legend's sample line

// layout places the labels of the markers at the canvas x positions xs.
func (o overlay) layout(c draw.Canvas, xs []vg.Length) (labels []markerLabel, rows int) {
	sty := labelStyle()
	rowHeight := sty.Height("0") + 2
	type span struct{ lo, hi vg.Length }
	var taken [][]span
	for i, mk := range o.markers {
		if mk.Label == "" {
			continue
		}
		w := sty.Width(mk.Label)
		left := xs[i] + markerGap
		if left+w > c.Max.X {
			left = xs[i] - markerGap - w
		}
		s := span{left - markerGap, left + w + markerGap}
		row := 0
		for ; row < len(taken); row++ {
			free := true
			for _, t := range taken[row] {
				if s.lo < t.hi && t.lo < s.hi {
					free = false
					break
				}
			}
			if free {
				break
			}
		}
		if row == len(taken) {
			taken = append(taken, nil)
		}
		taken[row] = append(taken[row], s)
		labels = append(labels, markerLabel{
			text: mk.Label, left: left, width: w, row: row,
			top: c.Max.Y - 2 - vg.Length(row)*rowHeight,
		})
	}
	return labels, len(taken)
}

// Plot implements plot.Plotter.
func (o overlay) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	xs := make([]vg.Length, len(o.markers))
	for i, mk := range o.markers {
		xs[i] = trX(mk.X)
		ls := draw.LineStyle{Color: markerColor, Width: 1}
		if mk.Dashed {
			ls.Dashes = markerDashes
		}
		c.StrokeLine2(ls, xs[i], c.Min.Y, xs[i], c.Max.Y)
	}
	labels, rows := o.layout(c, xs)
	sty := labelStyle()
	for _, l := range labels {
		halo(c, l.left, l.top, l.width, sty.Height(l.text))
		c.FillText(sty, vg.Point{X: l.left, Y: l.top}, l.text)
	}
	if len(o.legend) == 0 {
		return
	}

	lsty := legendStyle()
	rowHeight := lsty.Height("0") + 2
	top := c.Max.Y - 2 - vg.Length(rows)*(sty.Height("0")+2)
	if rows > 0 {
		top -= 4
	}
	var textWidth vg.Length
	for _, e := range o.legend {
		textWidth = max(textWidth, lsty.Width(e.name))
	}
	left := c.Max.X - 4 - legendLine - markerGap - textWidth
	halo(c, left, top, legendLine+markerGap+textWidth, vg.Length(len(o.legend))*rowHeight)
	for i, e := range o.legend {
		rowTop := top - vg.Length(i)*rowHeight
		mid := rowTop - lsty.Height(e.name)/2
		c.StrokeLine2(e.style, left, mid, left+legendLine, mid)
		c.FillText(lsty, vg.Point{X: left + legendLine + markerGap, Y: rowTop}, e.name)
	}
}

// halo fills the translucent white box behind text whose left end is at
// left and whose top is at top, with a point to spare on each side.
func halo(c draw.Canvas, left, top, width, height vg.Length) {
	c.FillPolygon(haloColor, []vg.Point{
		{X: left - 1, Y: top - height}, {X: left + width + 1, Y: top - height},
		{X: left + width + 1, Y: top + 1}, {X: left - 1, Y: top + 1},
	})
}

// polyline is a plotter.Plotter that strokes straight segments through
// points in data coordinates.
type polyline struct {
	pts   []plotter.XY
	style draw.LineStyle
}

// Plot implements plot.Plotter.
func (l polyline) Plot(c draw.Canvas, p *plot.Plot) {
	if len(l.pts) < 2 {
		return
	}
	trX, trY := p.Transforms(&c)
	pts := make([]vg.Point, len(l.pts))
	for i, pt := range l.pts {
		pts[i] = vg.Point{X: trX(pt.X), Y: trY(pt.Y)}
	}
	c.StrokeLines(l.style, pts)
}

// area is a plotter.Plotter that fills the polygon through points in data
// coordinates.
type area struct {
	pts   []plotter.XY
	color color.Color
}

// Plot implements plot.Plotter.
func (a area) Plot(c draw.Canvas, p *plot.Plot) {
	if len(a.pts) < 3 {
		return
	}
	trX, trY := p.Transforms(&c)
	pts := make([]vg.Point, len(a.pts))
	for i, pt := range a.pts {
		pts[i] = vg.Point{X: trX(pt.X), Y: trY(pt.Y)}
	}
	c.FillPolygon(a.color, pts)
}
