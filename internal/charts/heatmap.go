package charts

import (
	"fmt"
	"image/color"
	"io"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Heatmap is a grid of shares, such as cohort retention: one row per
// cohort ("2024-03"), first at the top, and one column per month since the
// cohort's first order (0, 1, 2, …), first at the left. Each cell is
// coloured on a single-hue scale from light blue (0) to dark blue (1), with
// a colour key at the right, and shows its share as a whole percentage
// ("63%") when every cell is large enough for "100%" (see heatCells). A
// NaN cell has no value and is left blank, as are the cells missing from
// the end of a short row: a young cohort has fewer months.
type Heatmap struct {
	Title, XLabel, YLabel string
	RowLabels             []string    // one per row of Values, top to bottom
	ColLabels             []string    // one per column, left to right
	Values                [][]float64 // Values[r][c] in [0, 1] or NaN; a row may be shorter than ColLabels
	// Width and Height are the size of the chart; zero means DefaultWidth
	// and DefaultHeight. At the default size, with both axis labels, a
	// grid of 18 columns and 12 rows still shows its percentages; 24
	// columns need a Width of about 720 points, 24 rows a Height of about
	// 480.
	Width, Height vg.Length
}

// heatStops is the colour scale of a Heatmap, from share 0 to share 1 in
// equal steps: ColorBrewer's sequential "Blues" in nine classes (Harrower
// and Brewer, "ColorBrewer.org: an online tool for selecting colour
// schemes for maps", The Cartographic Journal 40(1), 2003; the values as
// gonum's palette/brewer holds them) without its lightest class, which is
// too close to the white of a blank cell.
var heatStops = []color.RGBA{
	{R: 0xde, G: 0xeb, B: 0xf7, A: 0xff},
	{R: 0xc6, G: 0xdb, B: 0xef, A: 0xff},
	{R: 0x9e, G: 0xca, B: 0xe1, A: 0xff},
	{R: 0x6b, G: 0xae, B: 0xd6, A: 0xff},
	{R: 0x42, G: 0x92, B: 0xc6, A: 0xff},
	{R: 0x21, G: 0x71, B: 0xb5, A: 0xff},
	{R: 0x08, G: 0x51, B: 0x9c, A: 0xff},
	{R: 0x08, G: 0x30, B: 0x6b, A: 0xff},
}

const (
	cellGap   vg.Length = 1  // points of white between neighbouring cells, left when a cell is wider than three gaps
	cellPad   vg.Length = 2  // points a cell's text keeps from the cell's edges
	keyGap    vg.Length = 10 // points between the grid and its colour key
	keyBar    vg.Length = 10 // points: the width of the colour key's bar
	keyStrips           = 64 // bands of colour that make up the key's bar
	keyTicks            = 4  // the key is labelled every 1/keyTicks: 0%, 25%, …, 100%
	cellFont  vg.Length = 8  // points: the size of a cell's percentage
)

// Rows returns one row per cohort for the table beside the chart, top to
// bottom: Label is the row's label, Values its shares with one per column
// (NaN where there is none, including the missing end of a short row), and
// Texts the shares as percentages with one decimal ("62.5%"), empty where
// the value is NaN. The table's column headings are ColLabels.
func (h Heatmap) Rows() []SeriesRow {
	rows := make([]SeriesRow, len(h.Values))
	for r := range h.Values {
		row := SeriesRow{Values: make([]float64, len(h.ColLabels)), Texts: make([]string, len(h.ColLabels))}
		if r < len(h.RowLabels) {
			row.Label = h.RowLabels[r]
		}
		for c := range h.ColLabels {
			v := h.value(r, c)
			row.Values[c] = v
			if !math.IsNaN(v) {
				row.Texts[c] = formatPercent(v, 1)
			}
		}
		rows[r] = row
	}
	return rows
}

// value returns the share in row r and column c, NaN past the end of the
// row.
func (h Heatmap) value(r, c int) float64 {
	if c < len(h.Values[r]) {
		return h.Values[r][c]
	}
	return math.NaN()
}

// SVG writes the chart as an SVG document (see Bars.SVG for the fonts). It
// writes nothing when the grid is not valid.
func (h Heatmap) SVG(w io.Writer) error {
	p, err := h.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(h.Width, h.Height)
	return writeSVG(w, p, width, height, h.what)
}

// PNG writes the chart as a PNG image, 96 dots per inch (a default-sized
// chart is 768×320 pixels). It writes nothing when the grid is not valid.
func (h Heatmap) PNG(w io.Writer) error {
	p, err := h.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(h.Width, h.Height)
	return writePNG(w, p, width, height, h.what)
}

func (h Heatmap) what() string { return fmt.Sprintf("heatmap %q", h.Title) }

func (h Heatmap) check() error {
	if len(h.RowLabels) != len(h.Values) {
		return fmt.Errorf("%s: %d row labels for %d rows of values", h.what(), len(h.RowLabels), len(h.Values))
	}
	for r, row := range h.Values {
		if len(row) > len(h.ColLabels) {
			return fmt.Errorf("%s: row %q has %d values for %d columns", h.what(), h.RowLabels[r], len(row), len(h.ColLabels))
		}
		for c, v := range row {
			if math.IsNaN(v) {
				continue
			}
			if math.IsInf(v, 0) || v < 0 || v > 1 {
				return fmt.Errorf("%s: row %q, column %q is %v, want a share from 0 to 1 (or NaN for none)",
					h.what(), h.RowLabels[r], h.ColLabels[c], v)
			}
		}
	}
	return nil
}

// plot builds the chart: column c is centred at x = c and row r at y =
// rows−1−r, so that the first row is at the top; each cell is one unit
// wide and high.
func (h Heatmap) plot() (*plot.Plot, error) {
	if err := h.check(); err != nil {
		return nil, err
	}
	p := plot.New()
	style(p)
	p.Title.Text = h.Title
	p.X.Label.Text = h.XLabel
	p.Y.Label.Text = h.YLabel

	rows, cols := len(h.RowLabels), len(h.ColLabels)
	p.X.Min, p.X.Max = -0.5, float64(max(cols, 1))-0.5
	p.Y.Min, p.Y.Max = -0.5, float64(max(rows, 1))-0.5
	p.X.Tick.Marker = plot.ConstantTicks(categoryTicks(h.ColLabels, func(c int) float64 { return float64(c) }))
	p.Y.Tick.Marker = plot.ConstantTicks(categoryTicks(h.RowLabels, func(r int) float64 { return float64(rows - 1 - r) }))

	cells := heatCells{cols: cols, rows: rows}
	for r := range h.Values {
		for c := range h.ColLabels {
			cells.values = append(cells.values, h.value(r, c))
		}
	}
	p.Add(cells, heatKey{})
	return p, nil
}

// categoryTicks returns a tick at pos(i) for each label, with the labels
// that Bars.TickLabels would show (every k-th, k keeping months on the same
// months of the year) and the others as minor ticks.
func categoryTicks(labels []string, pos func(i int) float64) []plot.Tick {
	ticks := make([]plot.Tick, len(labels))
	for i := range ticks {
		ticks[i].Value = pos(i)
	}
	for _, i := range (Bars{Labels: labels}).TickLabels() {
		ticks[i].Label = labels[i]
	}
	return ticks
}

// shareColor returns the colour of the share v on the heatmap's scale:
// linear in sRGB between the two heatStops either side of v. Shares
// outside [0, 1] take the colour of the nearer end.
func shareColor(v float64) color.RGBA {
	f := min(max(v, 0), 1) * float64(len(heatStops)-1)
	i := min(int(f), len(heatStops)-2)
	t := f - float64(i)
	a, b := heatStops[i], heatStops[i+1]
	mix := func(x, y uint8) uint8 { return uint8(math.Round(float64(x) + t*(float64(y)-float64(x)))) }
	return color.RGBA{R: mix(a.R, b.R), G: mix(a.G, b.G), B: mix(a.B, b.B), A: 0xff}
}

// textOn returns the colour for text on the background bg: ink or white,
// whichever has the higher contrast ratio with it, both as defined in the
// Web Content Accessibility Guidelines 2.1 (W3C, 2018: "relative
// luminance" and "contrast ratio"). Ink wins a tie.
func textOn(bg color.Color) color.Color {
	lb := luminance(bg)
	if (lb+0.05)/(luminance(ink)+0.05) >= (1+0.05)/(lb+0.05) {
		return ink
	}
	return color.White
}

// luminance returns the WCAG 2.1 relative luminance of c, from 0 (black)
// to 1 (white), ignoring alpha.
func luminance(c color.Color) float64 {
	r, g, b, _ := c.RGBA()
	lin := func(v uint32) float64 {
		s := float64(v) / 0xffff
		if s <= 0.04045 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	return 0.2126*lin(r) + 0.7152*lin(g) + 0.0722*lin(b)
}

// heatCells is a plot.Plotter that fills one rectangle per cell that has a
// value, in its share's colour and cellGap apart, and writes the share in
// it as a whole percentage when cellTextFits. values holds the grid row
// after row, first row first.
type heatCells struct {
	values     []float64
	rows, cols int
}

func cellStyle() text.Style {
	return text.Style{
		Font:    font.From(sans, cellFont),
		XAlign:  draw.XCenter,
		YAlign:  draw.YCenter,
		Handler: plot.DefaultTextHandler,
	}
}

// cellTextFits reports whether a cell of the given size in points holds
// the widest percentage, "100%", and a line of text, cellPad from its
// edges. Either all cells show their percentage or none does, so that a
// grid never reads as if some cells lacked a value.
func cellTextFits(width, height vg.Length) bool {
	sty := cellStyle()
	return sty.Width("100%")+2*cellPad <= width && sty.Height("0")+2*cellPad <= height
}

// Plot implements plot.Plotter.
func (h heatCells) Plot(c draw.Canvas, p *plot.Plot) {
	if h.rows == 0 || h.cols == 0 {
		return
	}
	trX, trY := p.Transforms(&c)
	cellW, cellH := c.Size().X/vg.Length(h.cols), c.Size().Y/vg.Length(h.rows)
	labelled := cellTextFits(cellW, cellH)
	gapX, gapY := vg.Length(0), vg.Length(0)
	if cellW > 3*cellGap {
		gapX = cellGap / 2
	}
	if cellH > 3*cellGap {
		gapY = cellGap / 2
	}
	sty := cellStyle()
	for i, v := range h.values {
		if math.IsNaN(v) {
			continue
		}
		col, y := float64(i%h.cols), float64(h.rows-1-i/h.cols)
		x0, x1 := trX(col-0.5)+gapX, trX(col+0.5)-gapX
		y0, y1 := trY(y-0.5)+gapY, trY(y+0.5)-gapY
		fill := shareColor(v)
		c.FillPolygon(fill, []vg.Point{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}})
		if labelled {
			sty.Color = textOn(fill)
			c.FillText(sty, vg.Point{X: trX(col), Y: trY(y)}, formatPercent(v, 0))
		}
	}
}

// heatKey is a plot.Plotter that draws a heatmap's colour key right of the
// data area: a bar keyBar wide from the bottom of the grid (0 %) to its
// top (100 %), made of keyStrips bands of colour, labelled every 25 %. Its
// GlyphBoxes make the plot leave room for it.
type heatKey struct{}

func keyLabelStyle() text.Style {
	sty := labelStyle()
	sty.Color = ink
	sty.YAlign = draw.YCenter
	return sty
}

// keyWidth is the room the key takes right of the data area, in points.
func keyWidth() vg.Length {
	return keyGap + keyBar + markerGap + keyLabelStyle().Width(formatPercent(1, 0))
}

// GlyphBoxes implements plot.GlyphBoxer: boxes at the top and bottom right
// corners of the data area that hold the key and its end labels.
func (heatKey) GlyphBoxes(*plot.Plot) []plot.GlyphBox {
	h := keyLabelStyle().Height("0")
	r := vg.Rectangle{Min: vg.Point{X: keyGap, Y: -h / 2}, Max: vg.Point{X: keyWidth(), Y: h / 2}}
	return []plot.GlyphBox{{X: 1, Y: 0, Rectangle: r}, {X: 1, Y: 1, Rectangle: r}}
}

// Plot implements plot.Plotter.
func (heatKey) Plot(c draw.Canvas, _ *plot.Plot) {
	left := c.Max.X + keyGap
	height := c.Size().Y
	at := func(v float64) vg.Length { return c.Min.Y + vg.Length(v)*height }
	for i := range keyStrips {
		lo, hi := float64(i)/keyStrips, float64(i+1)/keyStrips
		y0, y1 := at(lo), at(hi)
		if i < keyStrips-1 {
			y1 += 0.5 // overlap the next strip so that no seam shows
		}
		c.FillPolygon(shareColor((lo+hi)/2), []vg.Point{
			{X: left, Y: y0}, {X: left + keyBar, Y: y0}, {X: left + keyBar, Y: y1}, {X: left, Y: y1},
		})
	}
	sty := keyLabelStyle()
	for k := 0; k <= keyTicks; k++ {
		v := float64(k) / keyTicks
		c.FillText(sty, vg.Point{X: left + keyBar + markerGap, Y: at(v)}, formatPercent(v, 0))
	}
}
