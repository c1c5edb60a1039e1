package bgnbd

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// simulated is one simulated customer: the calibration summary, the number
// of purchases in the holdout (T, T+hold], and whether the customer was
// still alive at T.
type simulated struct {
	c     Customer
	hold  int
	alive bool
}

// simulate draws n customers from the BG/NBD generative process with
// parameters p: λ ~ Gamma(shape r, rate α), p ~ Beta(a, b); from the first
// purchase at time 0, purchases follow a Poisson process with rate λ, and
// after each repeat purchase the customer drops out with probability p.
// Each customer's T is uniform on [tMin, tMax]; purchases are followed
// until T + hold.
func simulate(seed uint64, p Params, n int, tMin, tMax, hold float64) []simulated {
	rng := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
	lam := distuv.Gamma{Alpha: p.R, Beta: p.Alpha, Src: rng}
	drop := distuv.Beta{Alpha: p.A, Beta: p.B, Src: rng}
	out := make([]simulated, n)
	for i := range out {
		l, q := lam.Rand(), drop.Rand()
		T := tMin + (tMax-tMin)*rng.Float64()
		s := simulated{c: Customer{T: T}, alive: true}
		at, alive := 0.0, true
		for alive {
			at += rng.ExpFloat64() / l
			if at > T+hold {
				break
			}
			if at <= T {
				s.c.X++
				s.c.Tx = at
			} else {
				s.hold++
			}
			if rng.Float64() < q {
				alive = false
				if at <= T {
					s.alive = false
				}
			}
		}
		out[i] = s
	}
	return out
}

func customersOf(sim []simulated) []Customer {
	cs := make([]Customer, len(sim))
	for i, s := range sim {
		cs[i] = s.c
	}
	return cs
}

// logParamSE returns the asymptotic standard errors of (ln r, ln α, ln a,
// ln b) at p from the inverse of the observed information, the Hessian of
// the negative total log-likelihood by central differences of the analytic
// gradient.
func logParamSE(t *testing.T, cs []Customer, p Params) [4]float64 {
	t.Helper()
	o, err := newObjective(cs, nil)
	if err != nil {
		t.Fatal(err)
	}
	th := []float64{math.Log(p.R), math.Log(p.Alpha), math.Log(p.A), math.Log(p.B)}
	const h = 1e-4
	H := mat.NewDense(4, 4, nil)
	gp, gm := make([]float64, 4), make([]float64, 4)
	for j := 0; j < 4; j++ {
		tp := append([]float64(nil), th...)
		tm := append([]float64(nil), th...)
		tp[j] += h
		tm[j] -= h
		o.eval(tp, gp)
		o.eval(tm, gm)
		for i := 0; i < 4; i++ {
			H.Set(i, j, o.total*(gp[i]-gm[i])/(2*h))
		}
	}
	sym := mat.NewSymDense(4, nil)
	for i := 0; i < 4; i++ {
		for j := 0; j < 4; j++ {
			sym.SetSym(i, j, (H.At(i, j)+H.At(j, i))/2)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(sym) {
		t.Fatal("observed information is not positive definite at the fit")
	}
	var cov mat.SymDense
	if err := ch.InverseTo(&cov); err != nil {
		t.Fatal(err)
	}
	var se [4]float64
	for i := range se {
		se[i] = math.Sqrt(cov.At(i, i))
	}
	return se
}
