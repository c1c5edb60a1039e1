package charts

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Curves is several right-continuous step functions of a share on one
// chart, such as the Kaplan–Meier survival curves of each cohort, each
// with an optional confidence band, and a legend of their names at the top
// right. The y axis runs from 0 to 1, written as percentages; the x axis
// from 0 to MaxX.
type Curves struct {
	Title, XLabel, YLabel string
	// Series are the curves, at most maxCurves of them (more cannot be
	// told apart). Series i takes curveStyle(i): the colours of the
	// palette in turn and, with them, solid, dashed, dotted and dash-dot
	// lines in turn.
	Series []StepSeries
	// MaxX is where the x axis ends; zero means the largest last X or End
	// of any series.
	MaxX float64
	// At are the x values, ascending and within 0 … MaxX, at which Rows
	// reads the curves, such as 30, 90, 180 and 365 days. Nil means the
	// labelled x-axis ticks above 0 (Points).
	At []float64
	// Width and Height are the size of the chart; zero means DefaultWidth
	// and DefaultHeight.
	Width, Height vg.Length
}

// StepSeries is one curve of a Curves chart, meaning what Steps' fields
// mean: the curve is Start from x = 0 until X[0], then Y[i] from X[i]
// until X[i+1], and its band, when Lower and Upper are set, runs from
// Lower[i] to Upper[i] from X[i] on (and is Start wide before X[0]).
type StepSeries struct {
	Name         string    // in the legend and the table; an empty name has no legend entry
	X            []float64 // the times of the steps: ascending, ≥ 0; those after End are not drawn
	Y            []float64 // the value from X[i] on, in [0, 1]
	Lower, Upper []float64 // the band: both or neither, in [0, 1], Lower[i] ≤ Upper[i]
	Start        float64   // the value before X[0], in [0, 1] (1 for a survival curve)
	// End is where the curve stops, at most MaxX: the last time a young
	// cohort was observed, so that its curve does not run on flat past
	// what is known. Zero means MaxX.
	End float64
}

// maxCurves is the most series a Curves chart draws: beyond eight, colours
// and dash patterns repeat or come too close to tell apart.
const maxCurves = 8

// curveDashes are the dash patterns of the series in turn, in points:
// solid, dashed, dotted, dash-dot.
var curveDashes = [][]vg.Length{nil, seriesDashes, {1.5, 2.5}, {7, 3, 1.5, 3}}

// curveStyle returns the line style of series i: colour palette[i mod 5]
// and dashes curveDashes[i mod 4], so that the first twenty series differ
// in colour or dashes or both, and the first four differ in both. The
// palette is lines.go's, chosen to stay distinct for colour-blind readers;
// the dashes tell curves apart where colours do not.
func curveStyle(i int) draw.LineStyle {
	return draw.LineStyle{
		Color:  palette[i%len(palette)],
		Width:  curveWidth,
		Dashes: curveDashes[i%len(curveDashes)],
	}
}

// curveBandColor returns the fill of series i's band: its colour at 18 %
// opacity, so that overlapping bands and the grid show through.
func curveBandColor(i int) color.Color {
	r, g, b, _ := palette[i%len(palette)].RGBA()
	return color.NRGBA{R: uint8(r >> 8), G: uint8(g >> 8), B: uint8(b >> 8), A: 0x2e}
}

// Points returns the x values at which Rows reads the curves: At when it
// is set, otherwise the labelled ticks of the x axis above 0 (for MaxX 365:
// 50, 100, …, 350). It returns nil when MaxX is not valid.
func (cv Curves) Points() []float64 {
	if cv.At != nil {
		return cv.At
	}
	maxX := cv.maxX()
	if !finite(maxX) || !(maxX > 0) {
		return nil
	}
	var pts []float64
	for _, tk := range linearTicks(0, maxX) {
		if tk.Value > 0 {
			pts = append(pts, tk.Value)
		}
	}
	return pts
}

// Rows returns one row per series for the table beside the chart, in
// order: Label is the series' name, and Values and Texts hold, for each of
// Points, the curve's value there and that value as a percentage with one
// decimal, followed by the band when there is one: "62.5% (58.1%–66%)".
// A point past the series' End has the value NaN and the text "".
func (cv Curves) Rows() []SeriesRow {
	pts := cv.Points()
	maxX := cv.maxX()
	rows := make([]SeriesRow, len(cv.Series))
	for i, s := range cv.Series {
		row := SeriesRow{Label: s.Name, Values: make([]float64, len(pts)), Texts: make([]string, len(pts))}
		for j, x := range pts {
			y, lo, hi, ok := s.at(x, s.end(maxX))
			if !ok {
				row.Values[j] = math.NaN()
				continue
			}
			row.Values[j] = y
			row.Texts[j] = formatPercent(y, 1)
			if s.Lower != nil && s.Upper != nil {
				row.Texts[j] += " (" + formatPercent(lo, 1) + "–" + formatPercent(hi, 1) + ")"
			}
		}
		rows[i] = row
	}
	return rows
}

// at returns the curve's value and band at x (the band is y, y when there
// is none), and false when x is past end or the series is malformed
// (shorter Y, Lower or Upper than X).
func (s StepSeries) at(x, end float64) (y, lo, hi float64, ok bool) {
	if !(x <= end) {
		return 0, 0, 0, false
	}
	// The last step at or before x.
	i, exact := slices.BinarySearch(s.X, x)
	if !exact {
		i--
	}
	if i < 0 {
		return s.Start, s.Start, s.Start, true
	}
	if i >= len(s.Y) {
		return 0, 0, 0, false
	}
	y, lo, hi = s.Y[i], s.Y[i], s.Y[i]
	if s.Lower != nil && s.Upper != nil {
		if i >= len(s.Lower) || i >= len(s.Upper) {
			return 0, 0, 0, false
		}
		lo, hi = s.Lower[i], s.Upper[i]
	}
	return y, lo, hi, true
}

// end returns where the series stops: End, or maxX when End is zero.
func (s StepSeries) end(maxX float64) float64 {
	if s.End == 0 {
		return maxX
	}
	return s.End
}

// SVG writes the chart as an SVG document (see Bars.SVG for the fonts). It
// writes nothing when a curve or the points are not valid.
func (cv Curves) SVG(w io.Writer) error {
	p, err := cv.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(cv.Width, cv.Height)
	return writeSVG(w, p, width, height, cv.what)
}

// PNG writes the chart as a PNG image, 96 dots per inch (a default-sized
// chart is 768×320 pixels). It writes nothing when a curve or the points
// are not valid.
func (cv Curves) PNG(w io.Writer) error {
	p, err := cv.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(cv.Width, cv.Height)
	return writePNG(w, p, width, height, cv.what)
}

func (cv Curves) what() string { return fmt.Sprintf("curve chart %q", cv.Title) }

func (cv Curves) maxX() float64 {
	if cv.MaxX != 0 {
		return cv.MaxX
	}
	var hi float64
	for _, s := range cv.Series {
		if len(s.X) > 0 {
			hi = max(hi, s.X[len(s.X)-1])
		}
		hi = max(hi, s.End)
	}
	return hi
}

func (cv Curves) check() error {
	if len(cv.Series) > maxCurves {
		return fmt.Errorf("%s: %d series, at most %d can be told apart", cv.what(), len(cv.Series), maxCurves)
	}
	for _, s := range cv.Series {
		if err := s.check(); err != nil {
			return fmt.Errorf("%s: series %q: %w", cv.what(), s.Name, err)
		}
	}
	maxX := cv.maxX()
	if !finite(maxX) || !(maxX > 0) {
		return fmt.Errorf("%s: MaxX is %v, want a number > 0 (or 0 with a last x > 0)", cv.what(), maxX)
	}
	for _, s := range cv.Series {
		if s.End > maxX {
			return fmt.Errorf("%s: series %q: end %s is past MaxX (%s)", cv.what(), s.Name, formatNumber(s.End, -1), formatNumber(maxX, -1))
		}
	}
	for i, x := range cv.At {
		if !finite(x) || x < 0 || x > maxX {
			return fmt.Errorf("%s: at %d is %v, want a number from 0 to MaxX (%s)", cv.what(), i, x, formatNumber(maxX, -1))
		}
		if i > 0 && !(x > cv.At[i-1]) {
			return fmt.Errorf("%s: at %d (%v) is not above at %d (%v)", cv.what(), i, x, i-1, cv.At[i-1])
		}
	}
	return nil
}

// check returns an error naming the first thing wrong with the series
// alone, as Steps.check does for one curve.
func (s StepSeries) check() error {
	if len(s.Y) != len(s.X) {
		return fmt.Errorf("%d x values for %d y values", len(s.X), len(s.Y))
	}
	if (s.Lower == nil) != (s.Upper == nil) {
		return fmt.Errorf("a band needs both Lower and Upper")
	}
	if s.Lower != nil && (len(s.Lower) != len(s.X) || len(s.Upper) != len(s.X)) {
		return fmt.Errorf("band of %d lower and %d upper values for %d x values", len(s.Lower), len(s.Upper), len(s.X))
	}
	for i, x := range s.X {
		if !finite(x) || x < 0 {
			return fmt.Errorf("x %d is %v, want a number ≥ 0", i, x)
		}
		if i > 0 && !(x > s.X[i-1]) {
			return fmt.Errorf("x %d (%v) is not above x %d (%v)", i, x, i-1, s.X[i-1])
		}
	}
	share := func(name string, i int, v float64) error {
		if !finite(v) || v < 0 || v > 1 {
			return fmt.Errorf("%s %d is %v, want a share from 0 to 1", name, i, v)
		}
		return nil
	}
	if !finite(s.Start) || s.Start < 0 || s.Start > 1 {
		return fmt.Errorf("start is %v, want a share from 0 to 1", s.Start)
	}
	for i := range s.X {
		if err := share("y", i, s.Y[i]); err != nil {
			return err
		}
		if s.Lower == nil {
			continue
		}
		if err := share("lower", i, s.Lower[i]); err != nil {
			return err
		}
		if err := share("upper", i, s.Upper[i]); err != nil {
			return err
		}
		if s.Lower[i] > s.Upper[i] {
			return fmt.Errorf("lower %d (%v) is above upper %d (%v)", i, s.Lower[i], i, s.Upper[i])
		}
	}
	if !finite(s.End) || s.End < 0 {
		return fmt.Errorf("end is %v, want a number ≥ 0 (0: MaxX)", s.End)
	}
	return nil
}

// plot builds the chart: every band, then every curve over them (so that
// no band hides a curve), then the legend.
func (cv Curves) plot() (*plot.Plot, error) {
	if err := cv.check(); err != nil {
		return nil, err
	}
	p := newPlot(cv.Title, cv.XLabel, cv.YLabel)
	maxX := cv.maxX()
	p.X.Min, p.X.Max = 0, maxX
	p.X.Tick.Marker = plot.ConstantTicks(linearTicks(0, maxX))
	p.Y.Min, p.Y.Max = 0, 1
	p.Y.Tick.Marker = plot.ConstantTicks(shareTicks())

	for i, s := range cv.Series {
		if s.Lower == nil {
			continue
		}
		end := s.end(maxX)
		band := stepPoints(s.Start, s.X, s.Upper, end)
		lower := stepPoints(s.Start, s.X, s.Lower, end)
		for j := len(lower) - 1; j >= 0; j-- {
			band = append(band, lower[j])
		}
		p.Add(area{pts: band, color: curveBandColor(i)})
	}
	var legend []legendEntry
	for i, s := range cv.Series {
		line := polyline{pts: stepPoints(s.Start, s.X, s.Y, s.end(maxX)), style: curveStyle(i)}
		p.Add(line)
		if s.Name != "" {
			legend = append(legend, legendEntry{name: s.Name, style: line.style})
		}
	}
	if len(legend) > 0 {
		p.Add(overlay{legend: legend})
	}
	return p, nil
}
