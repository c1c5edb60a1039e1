package charts

import (
	"fmt"
	"io"
	"math"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Histogram is a histogram of values the caller has already binned, such
// as gap lengths in days (BinDays bins them), with marker lines such as
// the churn window. Bin i holds the values v with Edges[i] ≤ v <
// Edges[i+1] and is drawn as a bar of height Counts[i]; empty bins draw
// nothing.
type Histogram struct {
	Title, XLabel, YLabel string
	Edges                 []float64 // ascending, one more than Counts; > 0 when LogX
	Counts                []float64 // ≥ 0
	Markers               []Marker  // within Edges[0] … Edges[len(Edges)-1]
	// LogX draws the x axis on a logarithmic scale, for long tails; the
	// edges must then be greater than 0.
	LogX bool
	// Width and Height are the size of the chart; zero means DefaultWidth
	// and DefaultHeight.
	Width, Height vg.Length
}

// barGap is the white space between neighbouring bars of a histogram, in
// points, left when a bar is wider than three gaps.
const barGap vg.Length = 1

// Rows returns one Row per bin for the table beside the chart, in order:
// Label is the bin's edges as "7–14", which holds values from 7 up to but
// not including 14 (the whole days 7 to 13), rounded to two decimals for
// logarithmic bins ("1.19–1.41"); Value and Text are its count.
func (h Histogram) Rows() []Row {
	rows := make([]Row, len(h.Counts))
	for i, c := range h.Counts {
		var label string
		if i+1 < len(h.Edges) {
			label = formatEdge(h.Edges[i]) + "–" + formatEdge(h.Edges[i+1])
		}
		rows[i] = Row{Label: label, Value: c, Text: formatNumber(c, -1)}
	}
	return rows
}

func formatEdge(v float64) string { return formatNumber(math.Round(v*100)/100, -1) }

// SVG writes the chart as an SVG document (see Bars.SVG for the fonts). It
// writes nothing when the bins or markers are not valid.
func (h Histogram) SVG(w io.Writer) error {
	p, err := h.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(h.Width, h.Height)
	return writeSVG(w, p, width, height, h.what)
}

// PNG writes the chart as a PNG image, 96 dots per inch (a default-sized
// chart is 768×320 pixels). It writes nothing when the bins or markers are
// not valid.
func (h Histogram) PNG(w io.Writer) error {
	p, err := h.plot()
	if err != nil {
		return err
	}
	width, height := chartSize(h.Width, h.Height)
	return writePNG(w, p, width, height, h.what)
}

func (h Histogram) what() string { return fmt.Sprintf("histogram %q", h.Title) }

func (h Histogram) check() error {
	if len(h.Edges) != len(h.Counts)+1 && !(len(h.Edges) == 0 && len(h.Counts) == 0) {
		return fmt.Errorf("%s: %d edges for %d counts, want %d", h.what(), len(h.Edges), len(h.Counts), len(h.Counts)+1)
	}
	for i, e := range h.Edges {
		if !finite(e) {
			return fmt.Errorf("%s: edge %d is %v", h.what(), i, e)
		}
		if i > 0 && !(e > h.Edges[i-1]) {
			return fmt.Errorf("%s: edge %d (%v) is not above edge %d (%v)", h.what(), i, e, i-1, h.Edges[i-1])
		}
	}
	if h.LogX && len(h.Edges) > 0 && h.Edges[0] <= 0 {
		return fmt.Errorf("%s: a logarithmic x axis needs edges > 0, edge 0 is %v", h.what(), h.Edges[0])
	}
	for i, c := range h.Counts {
		if !finite(c) || c < 0 {
			return fmt.Errorf("%s: count of bin %d is %v, want a number ≥ 0", h.what(), i, c)
		}
	}
	lo, hi := h.xRange()
	if err := checkMarkers(h.Markers, lo, hi); err != nil {
		return fmt.Errorf("%s: %w", h.what(), err)
	}
	return nil
}

// xRange is the x axis: from the first edge to the last, or 1 to 10 (log)
// and 0 to 1 (linear) without bins.
func (h Histogram) xRange() (lo, hi float64) {
	switch {
	case len(h.Counts) > 0:
		return h.Edges[0], h.Edges[len(h.Edges)-1]
	case h.LogX:
		return 1, 10
	}
	return 0, 1
}

// plot builds the chart: the x axis runs from the first edge to the last,
// the y axis from 0 to a round number at or above the largest count.
func (h Histogram) plot() (*plot.Plot, error) {
	if err := h.check(); err != nil {
		return nil, err
	}
	p := newPlot(h.Title, h.XLabel, h.YLabel)
	xlo, xhi := h.xRange()
	p.X.Min, p.X.Max = xlo, xhi
	if h.LogX {
		p.X.Scale = plot.LogScale{}
		p.X.Tick.Marker = plot.ConstantTicks(logTicks(xlo, xhi))
	} else {
		p.X.Tick.Marker = plot.ConstantTicks(linearTicks(xlo, xhi))
	}
	top, integers := 0.0, true
	for _, c := range h.Counts {
		top = max(top, c)
		integers = integers && c == math.Trunc(c)
	}
	ticks := valueTicks(0, top, integers)
	p.Y.Min, p.Y.Max = ticks[0].Value, ticks[len(ticks)-1].Value
	p.Y.Tick.Marker = plot.ConstantTicks(ticks)

	p.Add(histBars{edges: h.Edges, counts: h.Counts})
	if len(h.Markers) > 0 {
		p.Add(overlay{markers: h.Markers})
	}
	return p, nil
}

// histBars fills one accent rectangle per non-empty bin, from the bin's
// left edge to its right one less half of barGap on each side, and from 0
// to its count.
type histBars struct {
	edges, counts []float64
}

// Plot implements plot.Plotter.
func (b histBars) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	zero := trY(0)
	for i, n := range b.counts {
		if n == 0 {
			continue
		}
		x0, x1 := trX(b.edges[i]), trX(b.edges[i+1])
		if x1-x0 > 3*barGap {
			x0, x1 = x0+barGap/2, x1-barGap/2
		}
		y := trY(n)
		c.FillPolygon(Accent, []vg.Point{{X: x0, Y: zero}, {X: x1, Y: zero}, {X: x1, Y: y}, {X: x0, Y: y}})
	}
}

// BinDays bins whole-day values, such as gap lengths, for a Histogram.
//
// Linear bins (logScale false) are w days wide from 0: bin i holds the
// days i·w to (i+1)·w − 1, and the last bin is the one that holds maxDays,
// so there are ⌊maxDays/w⌋ + 1 bins. The width w is the whole number of
// days that brings that count closest to 50 (the narrower on a tie), which
// gives about 40 to 60 bins once maxDays is 100 or more; below 49 days
// every day has its own bin, so there are fewer.
//
// Logarithmic bins (logScale true) have the edges 2^(k/4) for k = 0, 1, …:
// four bins per doubling from 1, up to the first edge above maxDays. Bins
// that hold no whole day (between 1 and 2, for instance) stay empty.
//
// Values above maxDays are counted in the last bin and values below the
// first edge (negative days; 0 with logarithmic bins) in the first, so the
// counts always add up to len(values); a page should say so beside the
// chart when it happens. maxDays below 1 is taken as 1.
func BinDays(values []int, maxDays int, logScale bool) (edges, counts []float64) {
	maxDays = max(maxDays, 1)
	if logScale {
		edges = []float64{1}
		for k := 1; edges[len(edges)-1] <= float64(maxDays); k++ {
			edges = append(edges, math.Pow(2, float64(k)/4))
		}
		counts = make([]float64, len(edges)-1)
		last := len(counts) - 1
		for _, v := range values {
			// The bin whose left edge is the last one at or below v.
			i, exact := slices.BinarySearch(edges, float64(v))
			if !exact {
				i--
			}
			counts[min(max(i, 0), last)]++
		}
		return edges, counts
	}

	w := binWidth(maxDays)
	n := maxDays/w + 1
	edges = make([]float64, n+1)
	for i := range edges {
		edges[i] = float64(i * w)
	}
	counts = make([]float64, n)
	for _, v := range values {
		i := 0
		if v > 0 {
			i = min(v/w, n-1)
		}
		counts[i]++
	}
	return edges, counts
}

// binWidth returns the whole-day width w ≥ 1 for which ⌊maxDays/w⌋ + 1
// bins is closest to 50, the narrower on a tie.
func binWidth(maxDays int) int {
	best, bestDist := 1, math.MaxInt
	for w := 1; ; w++ {
		n := maxDays/w + 1
		d := n - 50
		if d < 0 {
			d = -d
		}
		if d < bestDist {
			best, bestDist = w, d
		}
		if n <= 50 {
			return best
		}
	}
}

// BinDayCounts is BinDays for values given as counts per day: perDay[d] is
// how many values equal d. It bins the same way without expanding the
// counts into values, so millions of gaps cost one pass over the days.
func BinDayCounts(perDay []int, maxDays int, logScale bool) (edges, counts []float64) {
	edges, counts = BinDays(nil, maxDays, logScale)
	last := len(counts) - 1
	w := 0
	if !logScale {
		w = binWidth(max(maxDays, 1))
	}
	for v, k := range perDay {
		if k == 0 {
			continue
		}
		var i int
		if logScale {
			var exact bool
			i, exact = slices.BinarySearch(edges, float64(v))
			if !exact {
				i--
			}
		} else if v > 0 {
			i = v / w
		}
		counts[min(max(i, 0), last)] += float64(k)
	}
	return edges, counts
}
