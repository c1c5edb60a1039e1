package model

import (
	"fmt"
	"math"
	"slices"
	"sort"
)

// Platt is Platt scaling: calibrated = σ(Slope·score + Intercept).
// (Platt 1999 writes 1/(1 + exp(A·f + B)), so A = −Slope, B = −Intercept.)
type Platt struct {
	Slope     float64 `json:"slope"`
	Intercept float64 `json:"intercept"`
}

// FitPlatt fits Platt scaling of labels on scores by maximum likelihood
// with Platt's (1999) smoothed targets: a positive counts as
// (N₊+1)/(N₊+2) and a negative as 1/(N₋+2), which keeps the fit finite on
// separable scores (as scikit-learn's sigmoid calibration does). Newton's
// method with step halving on the two parameters.
func FitPlatt(scores []float64, labels []uint8) (*Platt, error) {
	if len(scores) != len(labels) {
		return nil, fmt.Errorf("fit Platt scaling: %d scores, %d labels", len(scores), len(labels))
	}
	if len(scores) == 0 {
		return nil, fmt.Errorf("fit Platt scaling: no scores")
	}
	var npos, nneg float64
	for i, y := range labels {
		if !finite(scores[i]) {
			return nil, fmt.Errorf("fit Platt scaling: score %d is %v", i, scores[i])
		}
		switch y {
		case 0:
			nneg++
		case 1:
			npos++
		default:
			return nil, fmt.Errorf("fit Platt scaling: label %d is %d", i, y)
		}
	}
	tpos := (npos + 1) / (npos + 2)
	tneg := 1 / (nneg + 2)
	target := func(y uint8) float64 {
		if y == 1 {
			return tpos
		}
		return tneg
	}
	// Negative log-likelihood of targets t: Σ log(1+e^η) − t·η.
	nll := func(a, b float64) float64 {
		var s float64
		for i, x := range scores {
			e := a*x + b
			s += math.Max(e, 0) + math.Log1p(math.Exp(-math.Abs(e))) - target(labels[i])*e
		}
		return s
	}
	if slices.Min(scores) == slices.Max(scores) {
		// One distinct score: only the intercept is identified; it is the
		// log-odds of the mean target.
		mt := (tpos*npos + tneg*nneg) / float64(len(scores))
		return &Platt{Slope: 0, Intercept: math.Log(mt / (1 - mt))}, nil
	}
	a, b := 0.0, math.Log((npos+1)/(nneg+1))
	obj := nll(a, b)
	tol := math.Max(1e-10, 1e-12*float64(len(scores)))
	for it := 0; it < 200; it++ {
		var ga, gb, haa, hab, hbb float64
		for i, x := range scores {
			q := sigmoid(a*x + b)
			r := q - target(labels[i])
			w := q * (1 - q)
			ga += r * x
			gb += r
			haa += w * x * x
			hab += w * x
			hbb += w
		}
		if math.Max(math.Abs(ga), math.Abs(gb)) <= tol {
			return &Platt{Slope: a, Intercept: b}, nil
		}
		det := haa*hbb - hab*hab
		if !(det > 0) {
			return nil, fmt.Errorf("fit Platt scaling: singular Hessian")
		}
		da := (hbb*ga - hab*gb) / det
		db := (haa*gb - hab*ga) / det
		if ga*da+gb*db <= 1e-6 {
			// Newton decrement tiny: the full step is safe and its gain is
			// below the objective's rounding (see FitLogistic).
			a, b = a-da, b-db
			obj = nll(a, b)
			continue
		}
		t := 1.0
		accepted := false
		for range 60 {
			na, nb := a-t*da, b-t*db
			if o := nll(na, nb); o <= obj {
				a, b, obj = na, nb, o
				accepted = true
				break
			}
			t /= 2
		}
		if !accepted {
			return &Platt{Slope: a, Intercept: b}, nil
		}
	}
	return nil, fmt.Errorf("fit Platt scaling: %w after 200 steps", ErrNotConverged)
}

// Calibrate maps one score.
func (p *Platt) Calibrate(score float64) float64 { return sigmoid(p.Slope*score + p.Intercept) }

// Isotonic is a fitted isotonic (non-decreasing) calibration: the
// pool-adjacent-violators fit at the thresholds X (strictly increasing) with
// values Y; scores between thresholds are interpolated linearly and scores
// outside [X[0], X[len−1]] are clipped, as scikit-learn's
// IsotonicRegression(out_of_bounds="clip").
type Isotonic struct {
	X []float64 `json:"x"`
	Y []float64 `json:"y"`
}

// FitIsotonic fits isotonic regression of labels (as 0/1) on scores, with
// unit weights, the way scikit-learn 1.2 does: rows with equal score are
// first pooled into one point (mean label, summed weight), then
// pool-adjacent-violators makes the values non-decreasing, then points
// inside flat runs are dropped (they do not change the interpolation).
func FitIsotonic(scores []float64, labels []uint8) (*Isotonic, error) {
	if len(scores) != len(labels) {
		return nil, fmt.Errorf("fit isotonic calibration: %d scores, %d labels", len(scores), len(labels))
	}
	y := make([]float64, len(labels))
	for i, l := range labels {
		if l > 1 {
			return nil, fmt.Errorf("fit isotonic calibration: label %d is %d", i, l)
		}
		y[i] = float64(l)
	}
	return FitIsotonicValues(scores, y)
}

// FitIsotonicValues is FitIsotonic for any real responses y.
func FitIsotonicValues(x, y []float64) (*Isotonic, error) {
	n := len(x)
	if n != len(y) {
		return nil, fmt.Errorf("fit isotonic regression: %d x, %d y", n, len(y))
	}
	if n == 0 {
		return nil, fmt.Errorf("fit isotonic regression: no points")
	}
	order := make([]int, n)
	for i := range order {
		if !finite(x[i]) || !finite(y[i]) {
			return nil, fmt.Errorf("fit isotonic regression: point %d is (%v, %v)", i, x[i], y[i])
		}
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return x[order[a]] < x[order[b]] })
	// Pool tied x: ux, mean y (uy) and weight (uw) per distinct x.
	ux := make([]float64, 0, n)
	uy := make([]float64, 0, n)
	uw := make([]float64, 0, n)
	for _, i := range order {
		if k := len(ux) - 1; k >= 0 && ux[k] == x[i] {
			uy[k] += y[i]
			uw[k]++
			continue
		}
		ux = append(ux, x[i])
		uy = append(uy, y[i])
		uw = append(uw, 1)
	}
	for k := range uy {
		uy[k] /= uw[k]
	}
	// Pool adjacent violators over blocks (value, weight, first index).
	m := len(ux)
	bv := make([]float64, 0, m)
	bw := make([]float64, 0, m)
	bs := make([]int, 0, m)
	for k := range m {
		v, w, s := uy[k], uw[k], k
		for len(bv) > 0 && bv[len(bv)-1] >= v {
			t := len(bv) - 1
			v = (bv[t]*bw[t] + v*w) / (bw[t] + w)
			w += bw[t]
			s = bs[t]
			bv, bw, bs = bv[:t], bw[:t], bs[:t]
		}
		bv, bw, bs = append(bv, v), append(bw, w), append(bs, s)
	}
	fitted := make([]float64, m)
	for b := range bv {
		end := m
		if b+1 < len(bs) {
			end = bs[b+1]
		}
		for k := bs[b]; k < end; k++ {
			fitted[k] = bv[b]
		}
	}
	// Keep the first and last point and every point whose value differs
	// from a neighbour's.
	iso := &Isotonic{}
	for k := range m {
		if k == 0 || k == m-1 || fitted[k] != fitted[k-1] || fitted[k] != fitted[k+1] {
			iso.X = append(iso.X, ux[k])
			iso.Y = append(iso.Y, fitted[k])
		}
	}
	return iso, nil
}

// Calibrate maps one score: linear interpolation between thresholds,
// clipped outside them; NaN stays NaN.
func (c *Isotonic) Calibrate(score float64) float64 {
	x, y := c.X, c.Y
	n := len(x)
	if score != score {
		return score
	}
	if score <= x[0] {
		return y[0]
	}
	if score >= x[n-1] {
		return y[n-1]
	}
	// First threshold above score; 1 ≤ k ≤ n−1.
	k, _ := slices.BinarySearch(x, score)
	if x[k] == score {
		return y[k]
	}
	x0, x1, y0, y1 := x[k-1], x[k], y[k-1], y[k]
	return y0 + (score-x0)*(y1-y0)/(x1-x0)
}

func (c *Isotonic) validate() error {
	if len(c.X) == 0 || len(c.X) != len(c.Y) {
		return fmt.Errorf("isotonic calibration: %d thresholds, %d values", len(c.X), len(c.Y))
	}
	for k := range c.X {
		if !finite(c.X[k]) || !finite(c.Y[k]) {
			return fmt.Errorf("isotonic calibration: point %d is (%v, %v)", k, c.X[k], c.Y[k])
		}
		if k > 0 && (c.X[k] <= c.X[k-1] || c.Y[k] < c.Y[k-1]) {
			return fmt.Errorf("isotonic calibration: point %d breaks the order", k)
		}
	}
	return nil
}
