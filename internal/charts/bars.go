package charts

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Default size of a chart: 576×240 points, which is 768×320 CSS pixels for
// the SVG and 768×320 pixels for the PNG (drawn at 96 dots per inch).
const (
	DefaultWidth  vg.Length = 576 // points
	DefaultHeight vg.Length = 240
	pngDPI                  = 96
)

// Accent is the one colour of the bars: #1f5f8b.
var Accent = color.RGBA{R: 0x1f, G: 0x5f, B: 0x8b, A: 0xff}

var (
	sans      = font.Font{Typeface: "Liberation", Variant: "Sans"}
	ink       = color.Gray{Y: 0x33}
	gridColor = color.Gray{Y: 0xdd}
)

// maxLabels is the most x-axis labels shown; more categories are thinned.
const maxLabels = 12

// Bars is a bar chart of one series over labelled categories (e.g. months).
type Bars struct {
	Title, XLabel, YLabel string
	Labels                []string // category labels, e.g. "2024-03"; one per value
	Values                []float64
	// Width and Height are the size of the chart; zero means DefaultWidth
	// and DefaultHeight.
	Width, Height vg.Length
}

// Row is one category of a chart as the table beside it shows it.
type Row struct {
	Label string
	Value float64
	Text  string // the value as the chart's axis writes numbers: "1,234"
}

// Rows returns the chart's numbers for the table on its page, in category
// order.
func (b Bars) Rows() []Row {
	rows := make([]Row, len(b.Values))
	for i, v := range b.Values {
		rows[i] = Row{Label: b.label(i), Value: v, Text: formatNumber(v, -1)}
	}
	return rows
}

func (b Bars) label(i int) string {
	if i < len(b.Labels) {
		return b.Labels[i]
	}
	return ""
}

// TickLabels returns the indices of the categories whose labels are shown
// on the x axis: all of them up to 12 categories, otherwise every k-th from
// the first, k being the smallest of 2, 3, 4, 6, 12, 24, 36, … that leaves
// at most 12. The steps divide or are multiples of 12 so that month labels
// keep to the same months of the year (quarters, half years, years).
func (b Bars) TickLabels() []int {
	n := len(b.Labels)
	k := 0
	for _, step := range []int{1, 2, 3, 4, 6} {
		if ceilDiv(n, step) <= maxLabels {
			k = step
			break
		}
	}
	if k == 0 {
		k = 12 * ceilDiv(n, 12*maxLabels)
	}
	shown := make([]int, 0, ceilDiv(n, k))
	for i := 0; i < n; i += k {
		shown = append(shown, i)
	}
	return shown
}

func ceilDiv(a, b int) int { return (a + b - 1) / b }

// SVG writes the chart as an SVG document. The text names the font
// Liberation Sans with Arial (the same metrics) and sans-serif after it, so
// that a browser without Liberation keeps the layout.
func (b Bars) SVG(w io.Writer) error {
	p, err := b.plot()
	if err != nil {
		return err
	}
	width, height := b.size()
	return writeSVG(w, p, width, height, b.what)
}

const svgFontFamily = "font-family:'Liberation Sans',Arial,Helvetica,sans-serif;"

// PNG writes the chart as a PNG image, 96 dots per inch (a default-sized
// chart is 768×320 pixels).
func (b Bars) PNG(w io.Writer) error {
	p, err := b.plot()
	if err != nil {
		return err
	}
	width, height := b.size()
	return writePNG(w, p, width, height, b.what)
}

func (b Bars) what() string { return fmt.Sprintf("bar chart %q", b.Title) }

// frame leaves a margin of a few points inside the canvas edge, so that the
// last bar and the top tick label are not cut.
func frame(c draw.Canvas) draw.Canvas {
	return draw.Crop(c, 4, -12, 2, -6)
}

func (b Bars) size() (w, h vg.Length) { return chartSize(b.Width, b.Height) }

// plot builds the chart: category i's bar is centred at x = i, from y = 0
// to its value.
func (b Bars) plot() (*plot.Plot, error) {
	if len(b.Labels) != len(b.Values) {
		return nil, fmt.Errorf("bar chart %q: %d labels for %d values", b.Title, len(b.Labels), len(b.Values))
	}
	integers := true
	lo, hi := 0.0, 0.0
	for i, v := range b.Values {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("bar chart %q: value of %q is %v", b.Title, b.Labels[i], v)
		}
		lo, hi = min(lo, v), max(hi, v)
		integers = integers && v == math.Trunc(v)
	}

	p := plot.New()
	style(p)
	p.Title.Text = b.Title
	p.X.Label.Text = b.XLabel
	p.Y.Label.Text = b.YLabel

	ticks := valueTicks(lo, hi, integers)
	p.Y.Min, p.Y.Max = ticks[0].Value, ticks[len(ticks)-1].Value
	p.Y.Tick.Marker = plot.ConstantTicks(ticks)

	n := len(b.Values)
	p.X.Min, p.X.Max = -0.5, float64(max(n, 1))-0.5
	xticks := make([]plot.Tick, n)
	for i := range xticks {
		xticks[i].Value = float64(i) // unlabelled: a minor tick
	}
	shown := b.TickLabels()
	widest := vg.Length(0)
	for _, i := range shown {
		xticks[i].Label = b.Labels[i]
		widest = max(widest, p.X.Tick.Label.Width(b.Labels[i]))
	}
	p.X.Tick.Marker = plot.ConstantTicks(xticks)
	// The data area is about the chart's width less 60 points of y axis and
	// margin; labels wider than their share of it are turned.
	width, _ := b.size()
	area := width - 60
	if len(shown) > 0 && widest+6 > area/vg.Length(len(shown)) {
		p.X.Tick.Label.Rotation = math.Pi / 6
		p.X.Tick.Label.XAlign = draw.XRight
		p.X.Tick.Label.YAlign = draw.YCenter
	}

	grid := plotter.NewGrid()
	grid.Vertical.Width = 0
	grid.Horizontal.Color = gridColor
	p.Add(grid)
	if n == 0 {
		return p, nil
	}
	bars, err := plotter.NewBarChart(plotter.Values(b.Values), max(1, 0.7*area/vg.Length(n)))
	if err != nil {
		return nil, fmt.Errorf("bar chart %q: %w", b.Title, err)
	}
	bars.Color = Accent
	bars.LineStyle.Width = 0
	p.Add(bars)
	// Add widened the axes to the data; keep the ranges set above.
	p.X.Min, p.X.Max = -0.5, float64(n)-0.5
	p.Y.Min, p.Y.Max = ticks[0].Value, ticks[len(ticks)-1].Value
	return p, nil
}

// style sets the plot's text in Liberation Sans and its lines in one quiet
// grey.
func style(p *plot.Plot) {
	p.Title.TextStyle.Font = font.From(sans, 12)
	p.Title.TextStyle.Color = ink
	p.Title.Padding = 8
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font = font.From(sans, 10)
		a.Label.TextStyle.Color = ink
		a.Tick.Label.Font = font.From(sans, 9)
		a.Tick.Label.Color = ink
		a.Color = ink
		a.Tick.Color = ink
		a.Tick.Length = 4
	}
	p.Legend.TextStyle.Font = font.From(sans, 10)
	p.X.Padding = 0
	p.Y.Padding = 0
}

// valueTicks returns the y-axis ticks from a multiple of the step at or
// below min(lo, 0) to one at or above max(hi, 0): at most about six ticks,
// 1, 2 or 5 times a power of ten apart, and whole numbers apart when the
// values are (counts never get a tick at 2.5).
func valueTicks(lo, hi float64, integers bool) []plot.Tick {
	lo, hi = min(lo, 0), max(hi, 0)
	if hi == lo {
		hi = lo + 1
	}
	step := niceStep((hi - lo) / 5)
	if integers {
		step = max(step, 1)
	}
	first, last := math.Floor(lo/step), math.Ceil(hi/step)
	decimals := max(0, -int(math.Floor(math.Log10(step))))
	var ticks []plot.Tick
	for k := first; k <= last; k++ {
		v := k * step
		ticks = append(ticks, plot.Tick{Value: v, Label: formatNumber(v, decimals)})
	}
	return ticks
}

// niceStep returns the smallest of 1, 2 and 5 times a power of ten that is
// at least x (x > 0).
func niceStep(x float64) float64 {
	pow := math.Pow(10, math.Floor(math.Log10(x)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*pow >= x*(1-1e-9) {
			return m * pow
		}
	}
	return 10 * pow
}

// formatNumber writes v with the given number of decimals (-1: as many
// as needed; whole numbers get none) and a comma between thousands:
// 12345 → "12,345", -1234.5 → "-1,234.5".
func formatNumber(v float64, decimals int) string {
	if v == math.Trunc(v) {
		decimals = 0
		v += 0 // -0 → 0
	}
	s := strconv.FormatFloat(v, 'f', decimals, 64)
	sign := ""
	if strings.HasPrefix(s, "-") {
		sign, s = "-", s[1:]
	}
	whole, frac, _ := strings.Cut(s, ".")
	var b strings.Builder
	b.WriteString(sign)
	for i, c := range whole {
		if i > 0 && (len(whole)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(c)
	}
	if frac != "" {
		b.WriteByte('.')
		b.WriteString(frac)
	}
	return b.String()
}
