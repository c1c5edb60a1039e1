package model

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"ebb/internal/frame"
)

// Logistic is a fitted logistic regression: P(y = 1) = σ(Intercept + Σ Coef[j]·x_j)
// over the frame columns named in Terms.
type Logistic struct {
	Terms     []string  `json:"terms"`
	Intercept float64   `json:"intercept"`
	Coef      []float64 `json:"coef"`
	// C is the inverse penalty strength (scikit-learn's C); +Inf means no
	// penalty. Stored in JSON as text so +Inf survives.
	C float64 `json:"-"`
	// SE are the standard errors of (Intercept, Coef...) from the inverse of
	// the observed information at the optimum; only for C = +Inf, else nil.
	SE []float64 `json:"se,omitempty"`
	// LogLik is Σ y ln p + (1−y) ln(1−p) over the training rows.
	LogLik float64 `json:"log_lik"`
	// Iterations is the number of Newton steps taken; GradNorm the largest
	// absolute component of the objective's gradient at the returned point.
	Iterations int     `json:"iterations"`
	GradNorm   float64 `json:"grad_norm"`
}

// LogisticOptions control FitLogistic.
type LogisticOptions struct {
	// C is scikit-learn's inverse regularisation strength: the objective is
	// Σ log-loss + ‖w‖²/(2C), intercept not penalised. Use math.Inf(1) for
	// the unpenalised maximum-likelihood fit (statsmodels Logit, R glm).
	// Zero means 1 (scikit-learn's default).
	C float64
	// GradTol stops Newton's method once every component of the gradient
	// of the summed objective is at most GradTol in absolute value. Zero
	// means 1e-12 × the number of rows (a mean-gradient tolerance of 1e-12),
	// at least 1e-10. Newton converges quadratically, so the tight default
	// costs about one extra step.
	GradTol float64
	// MaxIter caps Newton steps (default 100).
	MaxIter int
}

// ErrNotConverged is returned when Newton's method does not reach the
// gradient tolerance, typically because the unpenalised fit has separable
// data (the maximum-likelihood estimate does not exist).
var ErrNotConverged = errors.New("fit did not converge")

// FitLogistic fits L2-penalised (or, with C = +Inf, plain) logistic
// regression of f's labels on all of f's columns by Newton's method with
// step halving. Each step costs one pass over the data building XᵀWX
// (p²/2 multiply-adds a row) and a Cholesky solve of (p+1)×(p+1); work
// buffers are allocated once per fit, never per row. Missing values are
// refused: standardize (which fills them) first.
func FitLogistic(f *frame.Frame, opt LogisticOptions) (*Logistic, error) {
	n, p := f.Rows(), f.Cols()
	y := f.Labels()
	if y == nil {
		return nil, fmt.Errorf("fit logistic: frame has no labels")
	}
	if n == 0 {
		return nil, fmt.Errorf("fit logistic: no rows")
	}
	C := opt.C
	if C == 0 {
		C = 1
	}
	if !(C > 0) {
		return nil, fmt.Errorf("fit logistic: C = %v, want > 0", C)
	}
	lambda := 1 / C // 0 when C = +Inf
	tol := opt.GradTol
	if tol <= 0 {
		tol = math.Max(1e-10, 1e-12*float64(n))
	}
	maxIter := opt.MaxIter
	if maxIter <= 0 {
		maxIter = 100
	}
	cols := make([][]float64, p)
	for j := range p {
		cols[j] = f.ColAt(j)
		for i, v := range cols[j] {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("fit logistic: column %q row %d is %v; standardize first", f.Name(j), i, v)
			}
		}
	}
	var npos int
	for _, v := range y {
		npos += int(v)
	}
	if npos == 0 || npos == n {
		return nil, fmt.Errorf("fit logistic: all %d labels are %d", n, y[0])
	}

	k := p + 1 // parameter 0 is the intercept
	w := make([]float64, k)
	// Start at the intercept-only optimum: log-odds of the base rate.
	w[0] = math.Log(float64(npos) / float64(n-npos))
	eta := make([]float64, n)
	wt := make([]float64, n) // p(1−p), then scratch
	res := make([]float64, n)
	scratch := make([]float64, n)
	grad := make([]float64, k)
	hess := mat.NewSymDense(k, nil)
	step := mat.NewVecDense(k, nil)
	trial := make([]float64, k)
	var chol mat.Cholesky

	// loss is the objective at w, given eta = X·w.
	loss := func(w []float64) float64 {
		var s float64
		for i, e := range eta {
			s += logLoss(e, y[i])
		}
		var pen float64
		for _, v := range w[1:] {
			pen += v * v
		}
		return s + 0.5*lambda*pen
	}
	objective := func(w []float64) float64 {
		linear(cols, w, eta)
		return loss(w)
	}

	obj := objective(w)
	objStale := false
	fit := &Logistic{Terms: f.Names(), C: C}
	converged := false
	var gmax float64
	for it := 0; ; it++ {
		// eta holds X·w for the current w (objective was last evaluated at w).
		for i, e := range eta {
			q := sigmoid(e)
			res[i] = q - float64(y[i])
			wt[i] = q * (1 - q)
		}
		gradHess(cols, res, wt, scratch, lambda, w, grad, hess)
		gmax = 0
		for _, g := range grad {
			gmax = math.Max(gmax, math.Abs(g))
		}
		fit.Iterations = it
		if gmax <= tol {
			converged = true
			break
		}
		if it == maxIter {
			break
		}
		if ok := chol.Factorize(hess); !ok {
			return nil, fmt.Errorf("fit logistic: %w: Hessian not positive definite after %d steps (collinear or separable columns?)", ErrNotConverged, it)
		}
		if err := chol.SolveVecTo(step, mat.NewVecDense(k, grad)); err != nil {
			return nil, fmt.Errorf("fit logistic: solve Newton step: %w", err)
		}
		// Newton decrement gᵀH⁻¹g: twice the predicted decrease.
		var dec float64
		for j := range k {
			dec += grad[j] * step.AtVec(j)
		}
		if dec <= 1e-6 {
			// Inside the quadratic region the full step is safe, and the
			// decrease it brings is below the objective's rounding, so
			// comparing objectives would only add noise.
			for j := range k {
				w[j] -= step.AtVec(j)
			}
			linear(cols, w, eta)
			objStale = true // computed only if a later step needs it
			continue
		}
		// Step halving: accept the first step that does not increase the
		// objective.
		if objStale {
			obj, objStale = loss(w), false
		}
		t := 1.0
		accepted := false
		for range 60 {
			for j := range k {
				trial[j] = w[j] - t*step.AtVec(j)
			}
			if o := objective(trial); o <= obj {
				obj = o
				copy(w, trial)
				accepted = true
				break
			}
			t /= 2
		}
		if !accepted {
			// No decrease possible in floating point far from the optimum.
			obj = objective(w) // restores eta at w
			break
		}
	}
	fit.GradNorm = gmax
	if !converged {
		return nil, fmt.Errorf("fit logistic: %w after %d steps (largest gradient component %.3g, tolerance %.3g)", ErrNotConverged, fit.Iterations, gmax, tol)
	}
	if lambda == 0 {
		// Complete separation: the likelihood has no maximum; Newton only
		// reaches a small gradient by sending the coefficients to infinity.
		// Refuse when every row is fitted to within 1e-8 (as statsmodels'
		// perfect-separation check). Quasi-complete separation is not
		// detected here; it shows as very large standard errors.
		worst := 0.0
		for i, e := range eta {
			worst = math.Max(worst, math.Abs(float64(y[i])-sigmoid(e)))
		}
		if worst < 1e-8 {
			return nil, fmt.Errorf("fit logistic: %w: the labels are perfectly separated (no maximum-likelihood estimate; use a penalty)", ErrNotConverged)
		}
	}
	fit.Intercept = w[0]
	fit.Coef = append([]float64(nil), w[1:]...)
	var ll float64
	for i, e := range eta {
		ll -= logLoss(e, y[i])
	}
	fit.LogLik = ll
	if lambda == 0 {
		// hess is the observed information XᵀWX at w (no penalty term).
		if ok := chol.Factorize(hess); !ok {
			return nil, fmt.Errorf("fit logistic: information matrix singular at the optimum")
		}
		var inv mat.SymDense
		if err := chol.InverseTo(&inv); err != nil {
			return nil, fmt.Errorf("fit logistic: invert information matrix: %w", err)
		}
		fit.SE = make([]float64, k)
		for j := range k {
			fit.SE[j] = math.Sqrt(inv.At(j, j))
		}
	}
	return fit, nil
}

// linear sets eta = w[0] + Σ_j w[j+1]·cols[j], column by column.
func linear(cols [][]float64, w, eta []float64) {
	for i := range eta {
		eta[i] = w[0]
	}
	for j, col := range cols {
		c := w[j+1]
		if c == 0 {
			continue
		}
		for i, v := range col {
			eta[i] += c * v
		}
	}
}

// gradHess fills grad = Xᵀres + λ·(0, w[1:]) and hess = XᵀWX + λ·diag(0, 1, …, 1)
// where X has a leading column of ones. Rows are taken in blocks of
// hessBlock so that the (p+1)(p+2)/2 products of a block are formed while
// its values are in cache; block sums are added in row order, so the
// result does not depend on anything but the data.
func gradHess(cols [][]float64, res, wt, scratch []float64, lambda float64, w, grad []float64, hess *mat.SymDense) {
	k := len(cols) + 1
	g := make([]float64, k)
	h := make([]float64, k*k)
	n := len(res)
	for lo := 0; lo < n; lo += hessBlock {
		hi := min(lo+hessBlock, n)
		rb, wb, sb := res[lo:hi], wt[lo:hi], scratch[lo:hi]
		var g0, h00 float64
		for i, r := range rb {
			g0 += r
			h00 += wb[i]
		}
		g[0] += g0
		h[0] += h00
		for j, col := range cols {
			cj := col[lo:hi]
			var gj, h0 float64
			for i, v := range cj {
				gj += rb[i] * v
				wv := wb[i] * v
				sb[i] = wv
				h0 += wv
			}
			g[j+1] += gj
			h[j+1] += h0
			for l := j; l < len(cols); l++ {
				h[(j+1)*k+l+1] += dot(sb, cols[l][lo:hi])
			}
		}
	}
	for a := range k {
		grad[a] = g[a]
		for b := a; b < k; b++ {
			hess.SetSym(a, b, h[a*k+b])
		}
	}
	for j := 1; j < k; j++ {
		grad[j] += lambda * w[j]
		hess.SetSym(j, j, h[j*k+j]+lambda)
	}
}

// dot is Σ a[i]·b[i] with four running sums (fixed order, so repeatable).
func dot(a, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		s0 += a[i] * b[i]
		s1 += a[i+1] * b[i+1]
		s2 += a[i+2] * b[i+2]
		s3 += a[i+3] * b[i+3]
	}
	for ; i < len(a); i++ {
		s0 += a[i] * b[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// hessBlock is the number of rows gradHess treats at once: 13 columns of
// 2048 float64 plus scratch fit in a 256 KiB L2 cache.
const hessBlock = 2048

// sigmoid is 1/(1+e^−x), evaluated without overflow.
func sigmoid(x float64) float64 {
	if x >= 0 {
		return 1 / (1 + math.Exp(-x))
	}
	e := math.Exp(x)
	return e / (1 + e)
}

// logLoss is log(1 + e^η) − y·η, the negative log-likelihood of one row,
// evaluated stably.
func logLoss(eta float64, y uint8) float64 {
	l := math.Max(eta, 0) + math.Log1p(math.Exp(-math.Abs(eta)))
	if y == 1 {
		l -= eta
	}
	return l
}

// Predict returns P(y = 1) for every row of f (which must hold the Terms
// columns, already standardized if the fit was) into dst, reusing it when it
// has room.
func (m *Logistic) Predict(f *frame.Frame, dst []float64) ([]float64, error) {
	cols := make([][]float64, len(m.Terms))
	for j, name := range m.Terms {
		c, ok := f.Col(name)
		if !ok {
			return nil, fmt.Errorf("logistic predict: frame has no column %q", name)
		}
		cols[j] = c
	}
	dst = grow(dst, f.Rows())
	w := make([]float64, len(m.Coef)+1)
	w[0] = m.Intercept
	copy(w[1:], m.Coef)
	linear(cols, w, dst)
	for i, e := range dst {
		dst[i] = sigmoid(e)
	}
	return dst, nil
}

func (m *Logistic) validate() error {
	if len(m.Terms) != len(m.Coef) {
		return fmt.Errorf("logistic: %d terms, %d coefficients", len(m.Terms), len(m.Coef))
	}
	if m.SE != nil && len(m.SE) != len(m.Coef)+1 {
		return fmt.Errorf("logistic: %d standard errors for %d parameters", len(m.SE), len(m.Coef)+1)
	}
	if !finite(m.Intercept) {
		return fmt.Errorf("logistic: intercept is %v", m.Intercept)
	}
	for j, c := range m.Coef {
		if !finite(c) {
			return fmt.Errorf("logistic: coefficient of %q is %v", m.Terms[j], c)
		}
	}
	if !(m.C > 0) {
		return fmt.Errorf("logistic: C = %v", m.C)
	}
	return nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func grow(dst []float64, n int) []float64 {
	if cap(dst) >= n {
		return dst[:n]
	}
	return make([]float64, n)
}
