package charts

import (
	"fmt"
	"io"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Steps is a right-continuous step function of a share, such as the
// Kaplan–Meier repurchase curve F(t), the share of episodes ended by a
// reorder within t days: the curve is Start from x = 0 until X[0], then
// Y[i] from X[i] until X[i+1], and is drawn up to MaxX. The y axis runs
// from 0 to 1, written as percentages; the x axis from 0 to MaxX.
type Steps struct {
	Title, XLabel, YLabel string
	X                     []float64 // the times of the steps: ascending, ≥ 0; those after MaxX are not drawn
	Y                     []float64 // the value from X[i] on, in [0, 1]
	Start                 float64   // the value before X[0], in [0, 1] (0 for F)
	// MaxX is where the curve and the x axis end; zero means the last X.
	MaxX float64
	// Lower and Upper, when set, are a confidence band: from X[i] on it
	// runs from Lower[i] to Upper[i] (and is Start wide before X[0]). It is
	// drawn as a light filled region under the curve. Both or neither.
	Lower, Upper []float64
	Markers      []Marker // within 0 … MaxX
	// Width and Height are the size of the chart; zero means DefaultWidth
	// and DefaultHeight.
	Width, Height vg.Length
}

// Rows returns one Row per step drawn (X[i] ≤ MaxX) for the table beside
// the chart: Label is the step's x ("41"), Value its y and Text its y as a
// percentage with one decimal, followed by the band when there is one:
// "62.5% (58.1%–66%)".
func (s Steps) Rows() []Row {
	maxX := s.maxX()
	var rows []Row
	for i, x := range s.X {
		if x > maxX || i >= len(s.Y) {
			break
		}
		text := formatPercent(s.Y[i], 1)
		if i < len(s.Lower) && i < len(s.Upper) {
			text += " (" + formatPercent(s.Lower[i], 1) + "–" + formatPercent(s.Upper[i], 1) + ")"
		}
		rows = append(rows, Row{Label: formatNumber(x, -1), Value: s.Y[i], Text: text})
	}
	return rows
}

// SVG writes the chart as an SVG document (see Bars.SVG for the fonts). It
// writes nothing when the curve or markers are not valid.
func (s Steps) SVG(w io.Writer) error {
	p, err := s.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(s.Width, s.Height)
	return writeSVG(w, p, width, height, s.what)
}

// PNG writes the chart as a PNG image, 96 dots per inch (a default-sized
// chart is 768×320 pixels). It writes nothing when the curve or markers
// are not valid.
func (s Steps) PNG(w io.Writer) error {
	p, err := s.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(s.Width, s.Height)
	return writePNG(w, p, width, height, s.what)
}

func (s Steps) what() string { return fmt.Sprintf("step chart %q", s.Title) }

func (s Steps) maxX() float64 {
	if s.MaxX == 0 && len(s.X) > 0 {
		return s.X[len(s.X)-1]
	}
	return s.MaxX
}

func (s Steps) check() error {
	if len(s.Y) != len(s.X) {
		return fmt.Errorf("%s: %d x values for %d y values", s.what(), len(s.X), len(s.Y))
	}
	if (s.Lower == nil) != (s.Upper == nil) {
		return fmt.Errorf("%s: a band needs both Lower and Upper", s.what())
	}
	if s.Lower != nil && (len(s.Lower) != len(s.X) || len(s.Upper) != len(s.X)) {
		return fmt.Errorf("%s: band of %d lower and %d upper values for %d x values", s.what(), len(s.Lower), len(s.Upper), len(s.X))
	}
	for i, x := range s.X {
		if !finite(x) || x < 0 {
			return fmt.Errorf("%s: x %d is %v, want a number ≥ 0", s.what(), i, x)
		}
		if i > 0 && !(x > s.X[i-1]) {
			return fmt.Errorf("%s: x %d (%v) is not above x %d (%v)", s.what(), i, x, i-1, s.X[i-1])
		}
	}
	share := func(name string, i int, v float64) error {
		if !finite(v) || v < 0 || v > 1 {
			return fmt.Errorf("%s: %s %d is %v, want a share from 0 to 1", s.what(), name, i, v)
		}
		return nil
	}
	if !finite(s.Start) || s.Start < 0 || s.Start > 1 {
		return fmt.Errorf("%s: start is %v, want a share from 0 to 1", s.what(), s.Start)
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
			return fmt.Errorf("%s: lower %d (%v) is above upper %d (%v)", s.what(), i, s.Lower[i], i, s.Upper[i])
		}
	}
	maxX := s.maxX()
	if !finite(maxX) || !(maxX > 0) {
		return fmt.Errorf("%s: MaxX is %v, want a number > 0 (or 0 with a last x > 0)", s.what(), maxX)
	}
	if err := checkMarkers(s.Markers, 0, maxX); err != nil {
		return fmt.Errorf("%s: %w", s.what(), err)
	}
	return nil
}

// plot builds the chart: the band, then the curve, then the markers.
func (s Steps) plot() (*plot.Plot, error) {
	if err := s.check(); err != nil {
		return nil, err
	}
	p := newPlot(s.Title, s.XLabel, s.YLabel)
	maxX := s.maxX()
	p.X.Min, p.X.Max = 0, maxX
	p.X.Tick.Marker = plot.ConstantTicks(linearTicks(0, maxX))
	p.Y.Min, p.Y.Max = 0, 1
	p.Y.Tick.Marker = plot.ConstantTicks(shareTicks())

	if s.Lower != nil {
		upper := stepPoints(s.Start, s.X, s.Upper, maxX)
		lower := stepPoints(s.Start, s.X, s.Lower, maxX)
		band := upper
		for i := len(lower) - 1; i >= 0; i-- {
			band = append(band, lower[i])
		}
		p.Add(area{pts: band, color: bandColor})
	}
	p.Add(polyline{
		pts:   stepPoints(s.Start, s.X, s.Y, maxX),
		style: draw.LineStyle{Color: Accent, Width: curveWidth},
	})
	if len(s.Markers) > 0 {
		p.Add(overlay{markers: s.Markers})
	}
	return p, nil
}

// stepPoints returns the corners of the right-continuous step function
// that is start before xs[0] and ys[i] from xs[i] on, from x = 0 to maxX:
// (0, start), then for each step at or before maxX the corner before it,
// (x, previous y) (left out for a step at 0), and after it, (x, y); then
// (maxX, last y) unless the last step is at maxX.
func stepPoints(start float64, xs, ys []float64, maxX float64) []plotter.XY {
	pts := make([]plotter.XY, 0, 2*len(xs)+2)
	pts = append(pts, plotter.XY{X: 0, Y: start})
	y := start
	for i, x := range xs {
		if x > maxX {
			break
		}
		if x > 0 {
			pts = append(pts, plotter.XY{X: x, Y: y})
		}
		y = ys[i]
		pts = append(pts, plotter.XY{X: x, Y: y})
	}
	if pts[len(pts)-1].X < maxX {
		pts = append(pts, plotter.XY{X: maxX, Y: y})
	}
	return pts
}
