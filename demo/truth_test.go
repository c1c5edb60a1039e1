package demo

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"
)

func TestNoOrderProbabilityCases(t *testing.T) {
	march := time.Date(2025, time.March, 1, 0, 0, 0, 0, time.UTC) // orderSeason 1.0 all month
	signup := march.AddDate(-1, 0, 0)
	tests := []struct {
		name string
		c    Customer
		h    int
		want float64
	}{
		// 36.525 orders a year is 0.1 a day: exp(−0.1·10).
		{"active, no quiet clock", Customer{Signup: signup, RatePerYear: 36.525}, 10, math.Exp(-1)},
		{"left before t", Customer{Signup: signup, RatePerYear: 36.525, DropoutDay: march.AddDate(0, 0, -3)}, 10, 1},
		{"left by the coin after an order on day t", Customer{Signup: signup, RatePerYear: 36.525, DropoutDay: march.AddDate(0, 0, 1), LeftAfterOrder: true}, 10, 1},
		// The quiet clock firing tomorrow is the future: unknown at t.
		{"quiet clock fires the day after t", Customer{Signup: signup, RatePerYear: 36.525, DropoutDay: march.AddDate(0, 0, 1)}, 10, math.Exp(-1)},
		// With no orders at all only the clock acts, and it cannot create one.
		{"quiet clock, rate near zero", Customer{Signup: signup, RatePerYear: 1e-12, Quiet: true}, 30, 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := NoOrderProbability(tt.c, march, tt.h); math.Abs(got-tt.want) > 1e-9 {
				t.Errorf("NoOrderProbability = %v, want %v", got, tt.want)
			}
		})
	}
	if got := NoOrderProbability(Customer{Signup: march.AddDate(0, 0, 1), RatePerYear: 5}, march, 10); !math.IsNaN(got) {
		t.Errorf("before sign-up = %v, want NaN", got)
	}
}

// A quiet-clock customer: simulate the clock (whole days of an exponential
// with mean 90) and the Poisson orders directly, and compare.
func TestNoOrderProbabilityQuietMonteCarlo(t *testing.T) {
	march := time.Date(2025, time.March, 1, 0, 0, 0, 0, time.UTC)
	c := Customer{Signup: march.AddDate(0, -6, 0), RatePerYear: 36.525, Quiet: true} // 0.1 a day
	const h, reps = 20, 200_000
	rng := rand.New(rand.NewPCG(7, 9))
	none := 0
	for range reps {
		quiet := 1 + int(rng.ExpFloat64()*quietMeanDays) // day offset after t it takes effect
		first := 1 + int(rng.ExpFloat64()/0.1)           // first order day after t
		if first > h || first >= quiet {
			none++
		}
	}
	want := NoOrderProbability(c, march, h)
	got := float64(none) / reps
	if se := math.Sqrt(want * (1 - want) / reps); math.Abs(got-want) > 4*se {
		t.Errorf("simulated %v, formula %v (4 SE = %v)", got, want, 4*se)
	}
}

// On the generated business the true probabilities are calibrated: their
// mean over the customers present at t matches the share who did not order
// in (t, t+H].
func TestNoOrderProbabilityMatchesTheGenerator(t *testing.T) {
	b := Generate(Options{Customers: 20_000})
	at := time.Date(2025, time.June, 1, 0, 0, 0, 0, time.UTC)
	const h = 90
	ordered := map[string]bool{}
	for _, o := range b.Orders {
		if o.Date.After(at) && !o.Date.After(at.AddDate(0, 0, h)) {
			ordered[o.CustomerKey] = true
		}
	}
	var sumP, sumVar float64
	n, none := 0, 0
	for _, c := range b.Customers {
		if c.Signup.After(at) {
			continue
		}
		p := NoOrderProbability(c, at, h)
		sumP += p
		sumVar += p * (1 - p)
		n++
		if !ordered[c.Key] {
			none++
		}
	}
	if diff := float64(none) - sumP; math.Abs(diff) > 4*math.Sqrt(sumVar) {
		t.Errorf("%d of %d did not order, the true probabilities expect %.1f (4 SD = %.1f)", none, n, sumP, 4*math.Sqrt(sumVar))
	}
}
