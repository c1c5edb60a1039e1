package demo

import (
	"math"
	"time"
)

// NoOrderProbability returns P(no order day in (t, t+horizonDays] | the
// customer's true state at t), the probability a perfect model would give:
// it knows what no model can see — whether the customer had already left by
// t, their own order rate, and whether they carry the quiet-leaving clock —
// but not the future draws. So the ROC AUC of these probabilities bounds
// what any model can reach on the demo data.
//
// Under the generator's model: a customer who left on or before t, or by
// the coin tossed after an order on day t itself, orders never again
// (probability 1). Otherwise order days in (t, t+H] come from a
// Poisson process with the seasonal rate λ_d = rate/365.25 · orderSeason,
// so the chance of no order on days t+1 … t+k is exp(−Σ λ_d). A quiet-clock
// customer still active at t leaves on day t+j with the geometric
// probability (1−ρ)ρ^{j−1}, ρ = e^{−1/90} (the whole-day exponential clock is
// memoryless), after which no order counts; the dropout coin tossed after
// each order cannot stop the first order. t is a UTC date; a customer who
// signed up after t has no state yet and gets NaN.
func NoOrderProbability(c Customer, t time.Time, horizonDays int) float64 {
	if t.Before(c.Signup) || horizonDays < 1 {
		return math.NaN()
	}
	if !c.DropoutDay.IsZero() && (!c.DropoutDay.After(t) || c.LeftAfterOrder && !c.DropoutDay.After(t.AddDate(0, 0, 1))) {
		return 1 // gone by the end of day t
	}
	perDay := c.RatePerYear / daysPerYear
	// survive[k] = exp(−Σ_{d=t+1}^{t+k} λ_d): no order in the first k days.
	survive := make([]float64, horizonDays+1)
	survive[0] = 1
	cum := 0.0
	for k := 1; k <= horizonDays; k++ {
		day := t.AddDate(0, 0, k)
		cum += perDay * orderSeason[int(day.Month())-1]
		survive[k] = math.Exp(-cum)
	}
	if !c.Quiet {
		return survive[horizonDays]
	}
	rho := math.Exp(-1 / quietMeanDays)
	p, stay := 0.0, 1.0 // stay = ρ^{j−1}
	for j := 1; j <= horizonDays; j++ {
		p += stay * (1 - rho) * survive[j-1]
		stay *= rho
	}
	return p + stay*survive[horizonDays]
}

// Truth returns NoOrderProbability by customer key (NaN for a key the
// business does not have).
func (b Business) Truth() func(key string, t time.Time, horizonDays int) float64 {
	byKey := make(map[string]int, len(b.Customers))
	for i, c := range b.Customers {
		byKey[c.Key] = i
	}
	return func(key string, t time.Time, horizonDays int) float64 {
		i, ok := byKey[key]
		if !ok {
			return math.NaN()
		}
		return NoOrderProbability(b.Customers[i], t, horizonDays)
	}
}
