package charts

import (
	"fmt"
	"io"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Lines is a line chart of one or more series over a common x, such as
// the share lapsed today and the share that returned after a lapse for
// each churn window X from 1 to 365 days, with a legend of the series'
// names at the top right and optional markers.
type Lines struct {
	Title, XLabel, YLabel string
	X                     []float64 // ascending
	Series                []Series
	// Percent writes the y axis as percentages of shares (0.25 → "25%").
	Percent bool
	Markers []Marker // within X[0] … X[len(X)-1]
	// Width and Height are the size of the chart; zero means DefaultWidth
	// and DefaultHeight.
	Width, Height vg.Length
}

// Series is one line of a Lines chart: Y[i] is its value at X[i]. Series
// take the colours of the palette in turn, the accent first; Dashed draws
// one dashed, so that two series differ in more than colour.
type Series struct {
	Name   string // in the legend; an empty name has no legend entry
	Y      []float64
	Dashed bool
}

// SeriesRow is one x of a Lines chart as the table beside it shows it.
type SeriesRow struct {
	Label  string    // the x as the axis writes numbers: "45"
	Values []float64 // one per series, in order
	Texts  []string  // the values as the y axis writes them: "1,234" or "62.5%"
}

// Rows returns one row per x for the table beside the chart, in order.
// With Percent the values are written as percentages with one decimal.
func (l Lines) Rows() []SeriesRow {
	rows := make([]SeriesRow, len(l.X))
	for i, x := range l.X {
		r := SeriesRow{Label: formatNumber(x, -1)}
		for _, s := range l.Series {
			v := math.NaN()
			if i < len(s.Y) {
				v = s.Y[i]
			}
			r.Values = append(r.Values, v)
			if l.Percent {
				r.Texts = append(r.Texts, formatPercent(v, 1))
			} else {
				r.Texts = append(r.Texts, formatNumber(v, -1))
			}
		}
		rows[i] = r
	}
	return rows
}

// SVG writes the chart as an SVG document (see Bars.SVG for the fonts). It
// writes nothing when the series or markers are not valid.
func (l Lines) SVG(w io.Writer) error {
	p, err := l.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(l.Width, l.Height)
	return writeSVG(w, p, width, height, l.what)
}

// PNG writes the chart as a PNG image, 96 dots per inch (a default-sized
// chart is 768×320 pixels). It writes nothing when the series or markers
// are not valid.
func (l Lines) PNG(w io.Writer) error {
	p, err := l.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(l.Width, l.Height)
	return writePNG(w, p, width, height, l.what)
}

func (l Lines) what() string { return fmt.Sprintf("line chart %q", l.Title) }

// xRange is the x axis: from the first x to the last, one either side of a
// single x, and 0 to 1 without any.
func (l Lines) xRange() (lo, hi float64) {
	switch len(l.X) {
	case 0:
		return 0, 1
	case 1:
		return l.X[0] - 1, l.X[0] + 1
	}
	return l.X[0], l.X[len(l.X)-1]
}

func (l Lines) check() error {
	for i, x := range l.X {
		if !finite(x) {
			return fmt.Errorf("%s: x %d is %v", l.what(), i, x)
		}
		if i > 0 && !(x > l.X[i-1]) {
			return fmt.Errorf("%s: x %d (%v) is not above x %d (%v)", l.what(), i, x, i-1, l.X[i-1])
		}
	}
	for _, s := range l.Series {
		if len(s.Y) != len(l.X) {
			return fmt.Errorf("%s: series %q has %d values for %d x values", l.what(), s.Name, len(s.Y), len(l.X))
		}
		for i, y := range s.Y {
			if !finite(y) {
				return fmt.Errorf("%s: series %q at x %d is %v", l.what(), s.Name, i, y)
			}
		}
	}
	lo, hi := l.xRange()
	if err := checkMarkers(l.Markers, lo, hi); err != nil {
		return fmt.Errorf("%s: %w", l.what(), err)
	}
	return nil
}

// plot builds the chart: the x axis runs from the first x to the last, the
// y axis from round numbers at or beyond min(0, smallest y) and the largest
// y.
func (l Lines) plot() (*plot.Plot, error) {
	if err := l.check(); err != nil {
		return nil, err
	}
	p := newPlot(l.Title, l.XLabel, l.YLabel)
	xlo, xhi := l.xRange()
	p.X.Min, p.X.Max = xlo, xhi
	p.X.Tick.Marker = plot.ConstantTicks(linearTicks(xlo, xhi))

	lo, hi, integers := 0.0, 0.0, !l.Percent
	for _, s := range l.Series {
		for _, y := range s.Y {
			lo, hi = min(lo, y), max(hi, y)
			integers = integers && y == math.Trunc(y)
		}
	}
	ticks := valueTicks(lo, hi, integers)
	if l.Percent {
		decimals := 0
		if len(ticks) > 1 {
			decimals = percentDecimals(ticks[1].Value - ticks[0].Value)
		}
		for i := range ticks {
			ticks[i].Label = formatPercent(ticks[i].Value, decimals)
		}
	}
	p.Y.Min, p.Y.Max = ticks[0].Value, ticks[len(ticks)-1].Value
	p.Y.Tick.Marker = plot.ConstantTicks(ticks)

	var legend []legendEntry
	for i, s := range l.Series {
		pts := make([]plotter.XY, len(l.X))
		for j, x := range l.X {
			pts[j] = plotter.XY{X: x, Y: s.Y[j]}
		}
		line := polyline{pts: pts, style: draw.LineStyle{Color: palette[i%len(palette)], Width: curveWidth}}
		if s.Dashed {
			line.style.Dashes = seriesDashes
		}
		p.Add(line)
		if s.Name != "" {
			legend = append(legend, legendEntry{name: s.Name, style: line.style})
		}
	}
	if len(l.Markers) > 0 || len(legend) > 0 {
		p.Add(overlay{markers: l.Markers, legend: legend})
	}
	return p, nil
}
