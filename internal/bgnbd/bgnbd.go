package bgnbd

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mathext"
)

// Customer is one customer's purchase summary over a calibration period.
type Customer struct {
	// X is the number of repeat purchases (order days after the first) in
	// (0, T].
	X int
	// Tx is the time of the last repeat purchase, measured from the first
	// purchase (days in ebb); 0 when X = 0.
	Tx float64
	// T is the time from the first purchase to the end of the calibration
	// period (days in ebb).
	T float64
}

// Validate reports whether c is a possible summary: X ≥ 0, 0 ≤ Tx ≤ T,
// T > 0 and finite, and Tx = 0 when X = 0.
func (c Customer) Validate() error {
	switch {
	case c.X < 0:
		return fmt.Errorf("repeat purchases x = %d, want ≥ 0", c.X)
	case !(c.T > 0) || math.IsInf(c.T, 0):
		return fmt.Errorf("observation time T = %v, want a finite time > 0", c.T)
	case !(c.Tx >= 0) || c.Tx > c.T:
		return fmt.Errorf("time of last repeat purchase t_x = %v, want 0 ≤ t_x ≤ T = %v", c.Tx, c.T)
	case c.X == 0 && c.Tx != 0:
		return fmt.Errorf("time of last repeat purchase t_x = %v with no repeat purchases, want 0", c.Tx)
	}
	return nil
}

// Params are the four BG/NBD parameters.
type Params struct {
	// R (shape) and Alpha (rate, a time: days in ebb) of the gamma
	// distribution of purchase rates λ across customers; the mean rate is
	// R/Alpha purchases per unit time.
	R, Alpha float64
	// A and B of the beta distribution of the dropout probability p across
	// customers; the mean dropout probability is A/(A+B).
	A, B float64
}

// Validate reports whether all four parameters are finite and positive.
func (p Params) Validate() error {
	for _, v := range [...]struct {
		name string
		v    float64
	}{{"r", p.R}, {"alpha", p.Alpha}, {"a", p.A}, {"b", p.B}} {
		if !(v.v > 0) || math.IsInf(v.v, 0) {
			return fmt.Errorf("BG/NBD parameter %s = %v, want a finite value > 0", v.name, v.v)
		}
	}
	return nil
}

func lgamma(x float64) float64 {
	v, _ := math.Lgamma(x)
	return v
}

// logLikX returns A1 + A2 of the log-likelihood, the part that depends on
// the customer only through x.
func logLikX(p Params, x float64) float64 {
	a1 := lgamma(p.R+x) - lgamma(p.R) + p.R*math.Log(p.Alpha)
	a2 := lgamma(p.A+p.B) + lgamma(p.B+x) - lgamma(p.B) - lgamma(p.A+p.B+x)
	return a1 + a2
}

// logLikRest returns ln(e^{A3} + δ_{x>0} e^{A4}), the part of the
// log-likelihood that depends on t_x and T.
func logLikRest(p Params, c Customer) float64 {
	x := float64(c.X)
	a3 := -(p.R + x) * math.Log(p.Alpha+c.T)
	if c.X == 0 {
		return a3
	}
	a4 := math.Log(p.A) - math.Log(p.B+x-1) - (p.R+x)*math.Log(p.Alpha+c.Tx)
	return logAddExp(a3, a4)
}

func logAddExp(u, v float64) float64 {
	if u < v {
		u, v = v, u
	}
	return u + math.Log1p(math.Exp(v-u))
}

// LogLikelihood returns the natural log of the probability (density) of one
// customer's summary under p:
//
//	ln L = A1 + A2 + ln(e^{A3} + δ_{x>0}·e^{A4})
//	A1 = lnΓ(r+x) − lnΓ(r) + r ln α
//	A2 = lnΓ(a+b) + lnΓ(b+x) − lnΓ(b) − lnΓ(a+b+x)
//	A3 = −(r+x) ln(α+T)
//	A4 = ln a − ln(b+x−1) − (r+x) ln(α+t_x)
//
// evaluated with log-sum-exp. It is NaN when p or c is invalid. The value
// depends on the time unit (it is a density in t_x): compare
// log-likelihoods only between fits on the same data in the same unit.
func LogLikelihood(p Params, c Customer) float64 {
	if p.Validate() != nil || c.Validate() != nil {
		return math.NaN()
	}
	return logLikX(p, float64(c.X)) + logLikRest(p, c)
}

// TotalLogLikelihood returns Σ w_i · ln L_i over customers. weights is nil
// (every weight 1) or holds one non-negative count per customer, so that
// identical summaries can be passed once. It returns NaN when p, a customer
// or a weight is invalid.
func TotalLogLikelihood(p Params, customers []Customer, weights []int) float64 {
	if p.Validate() != nil || (weights != nil && len(weights) != len(customers)) {
		return math.NaN()
	}
	cache := map[int]float64{}
	var sum float64
	for i, c := range customers {
		w := 1
		if weights != nil {
			w = weights[i]
		}
		if w < 0 || c.Validate() != nil {
			return math.NaN()
		}
		if w == 0 {
			continue
		}
		lx, ok := cache[c.X]
		if !ok {
			lx = logLikX(p, float64(c.X))
			cache[c.X] = lx
		}
		sum += float64(w) * (lx + logLikRest(p, c))
	}
	return sum
}

// logOddsDead returns ln(a/(b+x−1)) + (r+x)·ln((α+T)/(α+t_x)), the log of
// P(dead)/P(alive), for x > 0.
func logOddsDead(p Params, c Customer) float64 {
	x := float64(c.X)
	return math.Log(p.A) - math.Log(p.B+x-1) + (p.R+x)*(math.Log(p.Alpha+c.T)-math.Log(p.Alpha+c.Tx))
}

// PAlive returns the probability that the customer is still alive (has not
// dropped out) at T, given the summary:
//
//	P(alive | x, t_x, T) = 1 / (1 + δ_{x>0} · a/(b+x−1) · ((α+T)/(α+t_x))^{r+x}).
//
// It is 1 when x = 0 (in the model a customer can only drop out right after
// a repeat purchase) and NaN when p or c is invalid.
func PAlive(p Params, c Customer) float64 {
	if p.Validate() != nil || c.Validate() != nil {
		return math.NaN()
	}
	if c.X == 0 {
		return 1
	}
	return 1 / (1 + math.Exp(logOddsDead(p, c)))
}

// PNoPurchase returns the probability that the customer makes no purchase
// in the next t time units (T, T+t], given the summary; t ≥ 0 (days in ebb).
//
// Derivation. A customer who has dropped out never buys again. A customer
// alive at T buys as a Poisson process with rate λ until the next purchase,
// so P(no purchase in t | λ, alive) = e^{−λt}, whatever p is. The alive
// branch of the individual likelihood is (1−p)^x λ^x e^{−λT}; multiplied by
// the Gamma(r, α) prior it gives the posterior λ | alive, data ~
// Gamma(shape r+x, rate α+T), independent of p. Its Laplace transform at t
// is ((α+T)/(α+T+t))^{r+x}. Hence
//
//	P(no purchase in t) = P(alive)·((α+T)/(α+T+t))^{r+x} + (1 − P(alive))
//	                    = 1 − P(alive)·(1 − ((α+T)/(α+T+t))^{r+x}).
//
// It is NaN when p, c or t is invalid.
func PNoPurchase(p Params, c Customer, t float64) float64 {
	if !(t >= 0) || math.IsInf(t, 0) {
		return math.NaN()
	}
	alive := PAlive(p, c)
	if math.IsNaN(alive) {
		return math.NaN()
	}
	// 1 − ((α+T)/(α+T+t))^{r+x} = −expm1((r+x)·ln(1 − t/(α+T+t))), kept
	// accurate for small t.
	x := float64(c.X)
	buy := -math.Expm1((p.R + x) * math.Log1p(-t/(p.Alpha+c.T+t)))
	return 1 - alive*buy
}

// aOne is the half-width around a = 1 where the expectations, whose closed
// forms divide by a − 1 (a removable singularity), are evaluated as the mean
// of their values at 1 ± aOne. The error of that is O(aOne²) relative.
const aOne = 1e-4

// ExpectedPurchases returns E[Y(t) | x, t_x, T], the expected number of
// purchases in the next t time units (T, T+t] given the summary (t in days
// in ebb):
//
//	E[Y(t) | x, t_x, T] = (a+b+x−1)/(a−1)
//	    · [1 − ((α+T)/(α+T+t))^{r+x} · ₂F₁(r+x, b+x; a+b+x−1; t/(α+T+t))]
//	    / (1 + δ_{x>0} · a/(b+x−1) · ((α+T)/(α+t_x))^{r+x}).
//
// ₂F₁ is gonum's mathext.Hypergeo (Cephes); its argument is below 1. It is
// NaN when p, c or t is invalid or the evaluation is not finite.
func ExpectedPurchases(p Params, c Customer, t float64) float64 {
	if !(t >= 0) || math.IsInf(t, 0) || p.Validate() != nil || c.Validate() != nil {
		return math.NaN()
	}
	if math.Abs(p.A-1) < aOne {
		lo, hi := p, p
		lo.A, hi.A = 1-aOne, 1+aOne
		return (expectedPurchases(lo, c, t) + expectedPurchases(hi, c, t)) / 2
	}
	return expectedPurchases(p, c, t)
}

func expectedPurchases(p Params, c Customer, t float64) float64 {
	if t == 0 {
		return 0
	}
	x := float64(c.X)
	z := t / (p.Alpha + c.T + t)
	f := mathext.Hypergeo(p.R+x, p.B+x, p.A+p.B+x-1, z)
	pow := math.Exp((p.R + x) * math.Log1p(-z)) // ((α+T)/(α+T+t))^{r+x}
	num := (p.A + p.B + x - 1) / (p.A - 1) * (1 - pow*f)
	den := 1.0
	if c.X > 0 {
		den += math.Exp(logOddsDead(p, c))
	}
	v := num / den
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return math.NaN()
	}
	return v
}

// ExpectedUnconditional returns E[X(t)], the expected number of repeat
// purchases in the first t time units after a customer's first purchase,
// for a customer drawn at random (t in days in ebb):
//
//	E[X(t)] = (a+b−1)/(a−1) · [1 − (α/(α+t))^r · ₂F₁(r, b; a+b−1; t/(α+t))].
//
// It equals ExpectedPurchases for a customer with x = 0 and T → 0. It is NaN
// when p or t is invalid or the evaluation is not finite.
func ExpectedUnconditional(p Params, t float64) float64 {
	if !(t >= 0) || math.IsInf(t, 0) || p.Validate() != nil {
		return math.NaN()
	}
	if math.Abs(p.A-1) < aOne {
		lo, hi := p, p
		lo.A, hi.A = 1-aOne, 1+aOne
		return (expectedUnconditional(lo, t) + expectedUnconditional(hi, t)) / 2
	}
	return expectedUnconditional(p, t)
}

func expectedUnconditional(p Params, t float64) float64 {
	if t == 0 {
		return 0
	}
	z := t / (p.Alpha + t)
	f := mathext.Hypergeo(p.R, p.B, p.A+p.B-1, z)
	pow := math.Exp(p.R * math.Log1p(-z)) // (α/(α+t))^r
	v := (p.A + p.B - 1) / (p.A - 1) * (1 - pow*f)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return math.NaN()
	}
	return v
}
