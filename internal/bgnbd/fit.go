package bgnbd

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/mathext"
	"gonum.org/v1/gonum/optimize"

	"ebb/internal/problem"
)

// MinCustomers is the smallest number of customers (total weight) Fit
// accepts: with fewer, four parameters are not meaningfully estimated.
const MinCustomers = 10

// FitOptions control Fit. The zero value is ready to use.
type FitOptions struct {
	// Weights is nil (every customer counts once) or holds one
	// non-negative count per customer, so that identical summaries can be
	// passed once with their multiplicity.
	Weights []int
	// Starts are the starting points tried; nil means the default set of
	// four, built from the data (see Fit). The best optimum wins.
	Starts []Params
	// GradTol is the largest absolute gradient component of the mean
	// log-likelihood per customer, with respect to the log-parameters,
	// accepted as converged. Zero means 1e-6.
	GradTol float64
	// MaxIter caps the quasi-Newton iterations of each start. Zero means 500.
	MaxIter int
}

// FitInfo describes how a fit went.
type FitInfo struct {
	// LogLik is the total (weighted) log-likelihood at the returned
	// parameters, Σ w_i ln L_i.
	LogLik float64
	// Iterations is the number of L-BFGS iterations of the winning start;
	// Evaluations the function evaluations of all starts.
	Iterations, Evaluations int
	// Converged says whether the winning start stopped with every gradient
	// component (mean log-likelihood per customer, log-parameters) at most
	// GradTol in absolute value; GradNorm is that largest component.
	Converged bool
	GradNorm  float64
	// Starts is the number of starting points tried; Agreeing how many of
	// them reached the winning log-likelihood to within 1e-6 per customer.
	Starts, Agreeing int
}

// group holds the customers with one value of x.
type group struct {
	x float64
	w float64 // total weight
}

// objective is the negative mean log-likelihood as a function of the
// log-parameters θ = (ln r, ln α, ln a, ln b).
type objective struct {
	groups []group
	// customers with positive weight: x, t_x, T, weight
	x, tx, t, w []float64
	total       float64
}

func newObjective(customers []Customer, weights []int) (*objective, error) {
	o := &objective{}
	byX := map[int]float64{}
	seen := map[Customer]int{}
	for i, c := range customers {
		w := 1
		if weights != nil {
			w = weights[i]
		}
		if w < 0 {
			return nil, problem.New(problem.Invalid, "Customer %d has a negative weight (%d).", i+1, w)
		}
		if err := c.Validate(); err != nil {
			return nil, problem.Wrap(problem.Invalid, err, "Customer %d has an impossible purchase summary.", i+1)
		}
		if w == 0 {
			continue
		}
		byX[c.X] += float64(w)
		o.total += float64(w)
		// Identical summaries (common with whole-day times) are merged
		// into one weighted row, in order of first appearance.
		if j, ok := seen[c]; ok {
			o.w[j] += float64(w)
			continue
		}
		seen[c] = len(o.x)
		o.x = append(o.x, float64(c.X))
		o.tx = append(o.tx, c.Tx)
		o.t = append(o.t, c.T)
		o.w = append(o.w, float64(w))
	}
	for x, w := range byX {
		o.groups = append(o.groups, group{x: float64(x), w: w})
	}
	sort.Slice(o.groups, func(i, j int) bool { return o.groups[i].x < o.groups[j].x })
	return o, nil
}

// eval returns the negative mean log-likelihood at θ and, when grad is not
// nil, stores its gradient with respect to θ there.
func (o *objective) eval(theta, grad []float64) float64 {
	r, alpha, a, b := math.Exp(theta[0]), math.Exp(theta[1]), math.Exp(theta[2]), math.Exp(theta[3])
	p := Params{r, alpha, a, b}
	if p.Validate() != nil {
		if grad != nil {
			for i := range grad {
				grad[i] = math.NaN()
			}
		}
		return math.Inf(1)
	}
	var ll, gr, gal, ga, gb float64
	lnAlpha := math.Log(alpha)
	need := grad != nil
	var psiR, psiAB float64
	if need {
		psiR, psiAB = mathext.Digamma(r), mathext.Digamma(a+b)
	}
	for _, g := range o.groups {
		ll += g.w * logLikX(p, g.x)
		if need {
			psiABX := mathext.Digamma(a + b + g.x)
			gr += g.w * (mathext.Digamma(r+g.x) - psiR + lnAlpha)
			gal += g.w * r / alpha
			ga += g.w * (psiAB - psiABX)
			gb += g.w * (psiAB + mathext.Digamma(b+g.x) - mathext.Digamma(b) - psiABX)
		}
	}
	sums := o.customerSums(r, alpha, a, b, need)
	ll += sums[0]
	gr += sums[1]
	gal += sums[2]
	ga += sums[3]
	gb += sums[4]
	if need {
		// Chain rule to log-parameters, sign and scale to the objective.
		s := -1 / o.total
		grad[0] = s * gr * r
		grad[1] = s * gal * alpha
		grad[2] = s * ga * a
		grad[3] = s * gb * b
	}
	f := -ll / o.total
	if math.IsNaN(f) {
		return math.Inf(1)
	}
	return f
}

// chunk is the number of customer rows one goroutine sums at a time. The
// partial sums are added in chunk order, so the result does not depend on
// scheduling or on the number of CPUs.
const chunk = 16384

// customerSums returns, summed over customer rows with their weights, the
// part ln(e^{A3} + δ_{x>0}e^{A4}) of the log-likelihood and (when need)
// its derivatives with respect to r, α, a and b.
func (o *objective) customerSums(r, alpha, a, b float64, need bool) [5]float64 {
	n := len(o.x)
	parts := make([][5]float64, (n+chunk-1)/chunk)
	workers := min(runtime.GOMAXPROCS(0), len(parts))
	if workers <= 1 {
		for k := range parts {
			parts[k] = o.rowSums(k*chunk, min(n, (k+1)*chunk), r, alpha, a, b, need)
		}
	} else {
		var next atomic.Int64
		var wg sync.WaitGroup
		for range workers {
			wg.Go(func() {
				for {
					k := int(next.Add(1)) - 1
					if k >= len(parts) {
						return
					}
					parts[k] = o.rowSums(k*chunk, min(n, (k+1)*chunk), r, alpha, a, b, need)
				}
			})
		}
		wg.Wait()
	}
	var out [5]float64
	for _, p := range parts {
		for j := range out {
			out[j] += p[j]
		}
	}
	return out
}

// rowSums is customerSums over rows lo to hi−1.
func (o *objective) rowSums(lo, hi int, r, alpha, a, b float64, need bool) [5]float64 {
	var ll, gr, gal, ga, gb float64
	lnA := math.Log(a)
	for i := lo; i < hi; i++ {
		x, w := o.x[i], o.w[i]
		rx := r + x
		l3 := math.Log(alpha + o.t[i])
		a3 := -rx * l3
		if x == 0 {
			ll += w * a3
			if need {
				gr -= w * l3
				gal -= w * rx / (alpha + o.t[i])
			}
			continue
		}
		l4 := math.Log(alpha + o.tx[i])
		bx := b + x - 1
		a4 := lnA - math.Log(bx) - rx*l4
		// log-sum-exp with one exponential: w4 = e^{A4}/(e^{A3}+e^{A4}).
		var w4 float64
		if a3 >= a4 {
			e := math.Exp(a4 - a3)
			ll += w * (a3 + math.Log1p(e))
			w4 = e / (1 + e)
		} else {
			e := math.Exp(a3 - a4)
			ll += w * (a4 + math.Log1p(e))
			w4 = 1 / (1 + e)
		}
		if need {
			w3 := 1 - w4
			gr -= w * (w3*l3 + w4*l4)
			gal -= w * rx * (w3/(alpha+o.t[i]) + w4/(alpha+o.tx[i]))
			ga += w * w4 / a
			gb -= w * w4 / bx
		}
	}
	return [5]float64{ll, gr, gal, ga, gb}
}

// defaultStarts builds starting points from the data: the mean purchase
// rate Σx/ΣT sets α for each r so that r/α matches it, and (a, b) cover
// low and high dropout.
func (o *objective) defaultStarts() []Params {
	var sx, st float64
	for i := range o.x {
		sx += o.w[i] * o.x[i]
		st += o.w[i] * o.t[i]
	}
	rate := sx / st
	var out []Params
	for _, r := range []float64{0.5, 2} {
		for _, ab := range [][2]float64{{1, 3}, {0.5, 0.5}} {
			out = append(out, Params{R: r, Alpha: r / rate, A: ab[0], B: ab[1]})
		}
	}
	return out
}

// Fit returns the maximum-likelihood BG/NBD parameters for the customers.
// It minimises the negative mean log-likelihood over the log-parameters
// (so every parameter stays positive) with gonum's L-BFGS and the analytic
// gradient, from each starting point in opts.Starts (default: four points
// scaled to the data's mean purchase rate), and keeps the best optimum.
//
// Each evaluation costs one pass over the customers (two logarithms and an
// exponential each) plus a few log-gamma and digamma calls per distinct x.
// Errors are problem.Invalid when there are fewer than MinCustomers
// customers, when no customer has a repeat purchase (then the dropout
// distribution cannot be estimated), or when a summary or weight is
// impossible. A fit that runs but does not reach the gradient tolerance is
// returned with FitInfo.Converged false, not an error.
func Fit(customers []Customer, opts FitOptions) (Params, FitInfo, error) {
	if opts.Weights != nil && len(opts.Weights) != len(customers) {
		return Params{}, FitInfo{}, fmt.Errorf("fit BG/NBD: %d weights for %d customers", len(opts.Weights), len(customers))
	}
	o, err := newObjective(customers, opts.Weights)
	if err != nil {
		return Params{}, FitInfo{}, err
	}
	if o.total < MinCustomers {
		return Params{}, FitInfo{}, problem.New(problem.Invalid,
			"The BG/NBD model needs at least %d customers; there are %d.", MinCustomers, int64(o.total))
	}
	if len(o.groups) == 1 && o.groups[0].x == 0 {
		return Params{}, FitInfo{}, problem.New(problem.Invalid,
			"The BG/NBD model needs some customers with a repeat purchase; none of the %d customers ordered on a second day.", int64(o.total))
	}
	tol := opts.GradTol
	if tol <= 0 {
		tol = 1e-6
	}
	maxIter := opts.MaxIter
	if maxIter <= 0 {
		maxIter = 500
	}
	starts := opts.Starts
	if starts == nil {
		starts = o.defaultStarts()
	}
	if len(starts) == 0 {
		return Params{}, FitInfo{}, errors.New("fit BG/NBD: no starting points")
	}
	// gonum asks for the value and then the gradient at the same point;
	// one pass computes both, so the last point's gradient is kept.
	var lastX, lastG []float64
	var lastF float64
	at := func(x []float64) {
		if lastX != nil && slices.Equal(x, lastX) {
			return
		}
		lastX = append(lastX[:0], x...)
		if lastG == nil {
			lastG = make([]float64, len(x))
		}
		lastF = o.eval(x, lastG)
	}
	prob := optimize.Problem{
		Func: func(x []float64) float64 { at(x); return lastF },
		Grad: func(g, x []float64) { at(x); copy(g, lastG) },
	}
	type run struct {
		theta []float64
		f     float64
		iter  int
	}
	var runs []run
	info := FitInfo{Starts: len(starts)}
	for i, s := range starts {
		if err := s.Validate(); err != nil {
			return Params{}, FitInfo{}, fmt.Errorf("fit BG/NBD: start %d: %w", i, err)
		}
		x0 := []float64{math.Log(s.R), math.Log(s.Alpha), math.Log(s.A), math.Log(s.B)}
		settings := &optimize.Settings{
			GradientThreshold: tol / 10,
			MajorIterations:   maxIter,
			Converger:         &optimize.FunctionConverge{Absolute: 1e-14, Relative: 1e-14, Iterations: 20},
		}
		// Minimize's error (for example a line search that cannot improve
		// on a point already at the optimum to rounding) is not fatal: the
		// best point it reached is judged by its gradient below.
		res, _ := optimize.Minimize(prob, x0, settings, &optimize.LBFGS{})
		if res == nil {
			continue
		}
		info.Evaluations += res.FuncEvaluations
		if math.IsInf(res.F, 0) || math.IsNaN(res.F) {
			continue
		}
		runs = append(runs, run{theta: append([]float64(nil), res.X...), f: res.F, iter: res.MajorIterations})
	}
	if len(runs) == 0 {
		return Params{}, info, errors.New("fit BG/NBD: no starting point gave a finite likelihood")
	}
	best := 0
	for i, r := range runs {
		if r.f < runs[best].f {
			best = i
		}
	}
	for _, r := range runs {
		if r.f-runs[best].f <= 1e-6 {
			info.Agreeing++
		}
	}
	th := runs[best].theta
	g := make([]float64, 4)
	f := o.eval(th, g)
	for _, v := range g {
		info.GradNorm = math.Max(info.GradNorm, math.Abs(v))
	}
	info.Converged = info.GradNorm <= tol
	info.Iterations = runs[best].iter
	info.LogLik = -f * o.total
	p := Params{R: math.Exp(th[0]), Alpha: math.Exp(th[1]), A: math.Exp(th[2]), B: math.Exp(th[3])}
	return p, info, nil
}
