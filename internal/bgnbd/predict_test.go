package bgnbd

import (
	"math"
	"testing"
)

func TestPAliveNoRepeatIsOne(t *testing.T) {
	tests := []struct {
		name string
		p    Params
		c    Customer
	}{
		{"CDNOW parameters, short T", Params{0.243, 4.414, 0.793, 2.426}, Customer{X: 0, T: 1}},
		{"CDNOW parameters, long T", Params{0.243, 4.414, 0.793, 2.426}, Customer{X: 0, T: 1e6}},
		{"days parameters", truth, Customer{X: 0, T: 365}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := PAlive(tt.p, tt.c); got != 1 {
				t.Errorf("PAlive = %v, want 1", got)
			}
		})
	}
}

// TestPNoPurchaseLimits checks PNoPurchase against limits that follow from
// the model without its closed form: nothing can happen in no time; over an
// unbounded horizon an alive customer buys again for sure, so only the dead
// make no purchase; a customer with x = 0 is alive, and never buying in t
// is then E[e^{−λt}] under the posterior Gamma(r, α+T), computed here by
// numerical integration (laplaceNumeric).
func TestPNoPurchaseLimits(t *testing.T) {
	p := Params{0.243, 4.414, 0.793, 2.426}
	cs := []Customer{{0, 0, 38.86}, {1, 30.43, 38.86}, {2, 1.71, 38.86}, {10, 35, 36}}
	for _, c := range cs {
		if got := PNoPurchase(p, c, 0); got != 1 {
			t.Errorf("%+v: PNoPurchase(t=0) = %v, want 1", c, got)
		}
		if got, want := PNoPurchase(p, c, 1e60), 1-PAlive(p, c); math.Abs(got-want) > 1e-6 {
			t.Errorf("%+v: PNoPurchase(t=1e60) = %v, want 1 − P(alive) = %v", c, got, want)
		}
		prev := 1.0
		for _, h := range []float64{1, 5, 13, 39, 78, 520} {
			q := PNoPurchase(p, c, h)
			if !(q <= prev && q >= 1-PAlive(p, c)) {
				t.Errorf("%+v: PNoPurchase(%v) = %v, want in [1−P(alive), %v]", c, h, q, prev)
			}
			prev = q
		}
	}
	for _, h := range []float64{1, 13, 39, 200} {
		c := Customer{X: 0, T: 38.86}
		got := PNoPurchase(p, c, h)
		want := laplaceNumeric(p.R+float64(c.X), p.Alpha+c.T, h)
		if math.Abs(got-want) > 1e-7 {
			t.Errorf("x = 0, t = %v: PNoPurchase = %.10f, numerical E[e^{−λt}] = %.10f", h, got, want)
		}
	}
}

// laplaceNumeric returns E[e^{−λt}] for λ ~ Gamma(shape k, rate β) by
// integrating over the gamma CDF scale: with λ = β⁻¹·g where g ~ Gamma(k, 1),
// E[e^{−λt}] = ∫₀^∞ e^{−g t/β} g^{k−1} e^{−g} dg / Γ(k); substituting
// g = s^{1/k} removes the end-point singularity (g^{k−1} dg = ds/k), so
// E = ∫₀^∞ e^{−s^{1/k}(1+t/β)} ds / Γ(k+1), integrated over [0, S] with the
// composite Simpson rule.
func laplaceNumeric(k, beta, t float64) float64 {
	c := 1 + t/beta
	// e^{−s^{1/k} c} < 1e-18 once s^{1/k} > 42/c.
	S := math.Pow(42/c, k)
	const n = 200000
	h := S / n
	f := func(s float64) float64 { return math.Exp(-math.Pow(s, 1/k) * c) }
	sum := f(0) + f(S)
	for i := 1; i < n; i++ {
		w := 2.0
		if i%2 == 1 {
			w = 4
		}
		sum += w * f(float64(i)*h)
	}
	g, _ := math.Lgamma(k + 1)
	return sum * h / 3 / math.Exp(g)
}

func TestExpectationsShape(t *testing.T) {
	p := Params{0.243, 4.414, 0.793, 2.426}
	cs := []Customer{{0, 0, 38.86}, {2, 30.43, 38.86}, {10, 35, 36}}
	for _, c := range cs {
		if got := ExpectedPurchases(p, c, 0); got != 0 {
			t.Errorf("%+v: E[Y(0)] = %v, want 0", c, got)
		}
		prev := 0.0
		for _, h := range []float64{0.5, 1, 10, 39, 100, 1000} {
			e := ExpectedPurchases(p, c, h)
			if !(e > prev) {
				t.Errorf("%+v: E[Y(%v)] = %v, want > %v (increasing in t)", c, h, e, prev)
			}
			prev = e
		}
	}
	// For an alive customer with x = 0 and T → 0, the conditional
	// expectation is the unconditional one.
	for _, h := range []float64{1, 39, 78} {
		got := ExpectedPurchases(p, Customer{X: 0, T: 1e-9}, h)
		want := ExpectedUnconditional(p, h)
		if math.Abs(got-want) > 1e-8 {
			t.Errorf("t = %v: E[Y | x=0, T=1e-9] = %.10f, E[X(t)] = %.10f", h, got, want)
		}
	}
	if got := ExpectedUnconditional(p, 0); got != 0 {
		t.Errorf("E[X(0)] = %v, want 0", got)
	}
}

// TestExpectationsNearAOne: the closed forms divide by a − 1; at and near
// a = 1 the value must be finite and continuous in a.
func TestExpectationsNearAOne(t *testing.T) {
	c := Customer{X: 3, Tx: 20, T: 30}
	base := Params{R: 0.5, Alpha: 10, B: 3}
	at := func(a float64) (float64, float64) {
		p := base
		p.A = a
		return ExpectedPurchases(p, c, 30), ExpectedUnconditional(p, 30)
	}
	e1, u1 := at(1)
	for _, h := range []float64{1e-2, 1e-3} {
		el, ul := at(1 - h)
		eh, uh := at(1 + h)
		// The second derivative in a is O(1) here, so the midpoint of the
		// two sides is within ~h² of the value at 1.
		if math.Abs(e1-(el+eh)/2) > 10*h*h || math.Abs(u1-(ul+uh)/2) > 10*h*h {
			t.Errorf("h = %v: E[Y] at 1−h, 1, 1+h = %v, %v, %v; E[X] = %v, %v, %v", h, el, e1, eh, ul, u1, uh)
		}
	}
}

func TestInvalidInputsGiveNaN(t *testing.T) {
	good := Params{0.5, 10, 1.2, 3}
	c := Customer{X: 2, Tx: 5, T: 10}
	tests := []struct {
		name string
		p    Params
		c    Customer
		t    float64
	}{
		{"r zero", Params{0, 10, 1.2, 3}, c, 5},
		{"alpha negative", Params{0.5, -1, 1.2, 3}, c, 5},
		{"a NaN", Params{0.5, 10, math.NaN(), 3}, c, 5},
		{"b infinite", Params{0.5, 10, 1.2, math.Inf(1)}, c, 5},
		{"negative x", good, Customer{X: -1, T: 10}, 5},
		{"t_x after T", good, Customer{X: 1, Tx: 11, T: 10}, 5},
		{"T zero", good, Customer{X: 0, T: 0}, 5},
		{"t_x without repeats", good, Customer{X: 0, Tx: 3, T: 10}, 5},
		{"negative horizon", good, c, -1},
		{"infinite horizon", good, c, math.Inf(1)},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := map[string]float64{
				"PNoPurchase":       PNoPurchase(tt.p, tt.c, tt.t),
				"ExpectedPurchases": ExpectedPurchases(tt.p, tt.c, tt.t),
			}
			if tt.t >= 0 && !math.IsInf(tt.t, 0) {
				got["LogLikelihood"] = LogLikelihood(tt.p, tt.c)
				got["PAlive"] = PAlive(tt.p, tt.c)
			}
			for name, v := range got {
				if !math.IsNaN(v) {
					t.Errorf("%s = %v, want NaN", name, v)
				}
			}
		})
	}
}
