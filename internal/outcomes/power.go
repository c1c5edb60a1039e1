package outcomes

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"ebb/internal/problem"
)

// The design of a holdout comparison: a two-sided test at 5% with 80%
// power, the usual choice in planning a trial.
const (
	DefaultAlpha = 0.05
	DefaultPower = 0.80
)

// Power returns the power of a two-sided test at level alpha to tell rate
// p1 in a group of n1 from rate p2 in a group of n2, by the normal
// approximation without continuity correction (Fleiss):
//
//	Φ((|p1 − p2| − z_{1−α/2}·√(p̄q̄(1/n1 + 1/n2))) / √(p1q1/n1 + p2q2/n2)),
//
// with p̄ = (n1p1 + n2p2)/(n1 + n2), q = 1 − p. Like R's power.prop.test
// with strict = FALSE it ignores rejections in the wrong direction, so
// equal rates give α/2, not α. When both rates are 0 or 1 the denominator
// vanishes and Power returns 1 for different rates and α/2 for equal ones.
//
// Power panics when n1 or n2 is not positive, a rate is outside [0, 1] or
// alpha is outside (0, 1): callers validate user input first
// (MinDetectableEffect does).
func Power(n1, n2 int, p1, p2, alpha float64) float64 {
	if n1 <= 0 || n2 <= 0 || !(p1 >= 0 && p1 <= 1) || !(p2 >= 0 && p2 <= 1) || !(alpha > 0 && alpha < 1) {
		panic(fmt.Sprintf("outcomes: Power(%d, %d, %v, %v, %v) out of range", n1, n2, p1, p2, alpha))
	}
	return powerOf(float64(n1), float64(n2), p1, p2, upperZ(alpha/2))
}

// powerOf is Power for group sizes that need not be whole (to check against
// R's fractional n) and a given z_{1−α/2}.
func powerOf(n1, n2, p1, p2, za float64) float64 {
	num, sd := powerTerms(n1, n2, p1, p2, za)
	if sd == 0 {
		if p1 == p2 {
			return 1 - distuv.UnitNormal.CDF(za)
		}
		return 1
	}
	return distuv.UnitNormal.CDF(num / sd)
}

// powerTerms returns |p1 − p2| − z_a·√(p̄q̄(1/n1 + 1/n2)) and the standard
// deviation √(p1q1/n1 + p2q2/n2) under the alternative.
func powerTerms(n1, n2, p1, p2, za float64) (num, sd float64) {
	pbar := (n1*p1 + n2*p2) / (n1 + n2)
	null := math.Sqrt(pbar * (1 - pbar) * (1/n1 + 1/n2))
	return math.Abs(p1-p2) - za*null, math.Sqrt(p1*(1-p1)/n1 + p2*(1-p2)/n2)
}

// upperZ returns the standard normal quantile with upper tail q.
func upperZ(q float64) float64 { return distuv.UnitNormal.Quantile(1 - q) }

// MinDetectableEffect returns the smallest drop δ > 0 in a rate that a
// two-sided test at level alpha detects with the given power when group 1
// (n1 customers, e.g. the contacted) has rate base − δ and group 2 (n2
// customers, the holdout) has rate base. It solves Fleiss's equation
//
//	z_{1−α/2}·√(p̄q̄(1/n1 + 1/n2)) + z_{power}·√(p1q1/n1 + p2q2/n2) = δ
//
// (p1 = base − δ, p2 = base, p̄ = (n1p1 + n2p2)/(n1 + n2)) by bisection on
// (0, base] to full float64 precision. With power ≥ 0.5 the left side
// minus δ is concave in δ and positive at 0, so the root is unique. The
// result is a rate difference (0.05 is 5 points).
//
// It is an Invalid problem when a group is empty, base is not in (0, 1]
// (at 0 there is nothing to drop), alpha is not in (0, 1), power is not in [0.5, 1), or
// when even δ = base (a drop to a rate of 0) is not detectable with groups
// this small.
func MinDetectableEffect(n1, n2 int, base float64, alpha, power float64) (float64, error) {
	switch {
	case n1 <= 0 || n2 <= 0:
		return 0, problem.New(problem.Invalid, "A detectable effect needs customers in both groups, not %d and %d.", n1, n2)
	case !(base > 0 && base <= 1):
		return 0, problem.New(problem.Invalid, "A detectable effect needs a base rate above 0%% and at most 100%%, not %v.", base)
	case !(alpha > 0 && alpha < 1):
		return 0, problem.New(problem.Invalid, "The significance level must lie strictly between 0 and 1, not %v.", alpha)
	case !(power >= 0.5 && power < 1):
		return 0, problem.New(problem.Invalid, "The power must be at least 0.5 and below 1, not %v.", power)
	}
	za, zb := upperZ(alpha/2), upperZ(1-power)
	f1, f2 := float64(n1), float64(n2)
	// excess(δ) > 0 while δ is too small to detect.
	excess := func(d float64) float64 {
		num, sd := powerTerms(f1, f2, base-d, base, za)
		return zb*sd - num
	}
	if excess(base) > 0 {
		return 0, problem.New(problem.Invalid,
			"With groups of %s and %s customers, even a drop from %s to 0%% could not be detected with %s power in a two-sided test at the %s level.",
			count(n1), count(n2), pct(base), pct(power), pct(alpha))
	}
	lo, hi := 0.0, base
	for range 200 {
		mid := lo + (hi-lo)/2
		if mid <= lo || mid >= hi {
			break
		}
		if excess(mid) > 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	return hi, nil
}
