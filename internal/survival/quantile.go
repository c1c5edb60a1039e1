package survival

import (
	"fmt"
	"math"
)

// Tolerance is how close S(t) must be to 1 − p for Quantile to treat the
// curve as sitting exactly on 1 − p: √(float64 machine epsilon) ≈ 1.49e-8,
// the default tolerance of R survival's quantile.survfit. FirstTimeCDFAtLeast
// uses it too, so that a level equal to a value of F up to rounding is
// reached at that value's time.
const Tolerance = 1.4901161193847656e-08

// Quantile returns the p-quantile of the episode duration, p in [0, 1]: the
// first event time at which S(t) < 1 − p, i.e. F(t) > p. When S sits on
// 1 − p (within Tolerance) from an event time t_j until the next event time
// t_{j+1}, any time in [t_j, t_{j+1}) qualifies and the quantile is the
// midpoint (t_j + t_{j+1})/2; when that flat step is the last one (the
// longest episodes are censored), the midpoint between t_j and the largest
// observed time. This is R survival's quantile.survfit rule. (R's
// print.survfit uses the same midpoint rule for the median except on a flat
// last step, where it shows t_j.)
//
// ok is false when S never falls to 1 − p (too few events: the curve ends
// above it). Quantile(0) is 0. It panics if p is outside [0, 1] or NaN.
func (c *Curve) Quantile(p float64) (t float64, ok bool) {
	checkProb(p)
	return c.findq(p, func(j int) float64 { return 1 - c.surv[j] })
}

// Median returns the median duration, Quantile(0.5), with R's midpoint
// rule when S is exactly 1/2 on a step.
func (c *Curve) Median() (t float64, ok bool) { return c.Quantile(0.5) }

// QuantileCI returns the confidence limits of the p-quantile: the same
// rule as Quantile applied to the lower confidence curve (giving lo) and to
// the upper one (giving hi), with the curve's ConfType and level. This
// inverts the pointwise band, as Brookmeyer & Crowley (1982) proposed for
// the median: the limits are the first times at which the lower and the
// upper curve reach 1 − p. loOK or hiOK is false where that confidence curve
// never reaches 1 − p (R prints NA); an upper limit is often missing for
// small samples. Points where a limit is undefined (S = 0 for the log
// transformation) are skipped, as R does.
//
// The result is R's quantile.survfit, except where the upper curve rises
// again after reaching 1 − p (the log upper limit can rise as the Greenwood
// sum grows): quantile.survfit sorts the curve's values and may report a
// later time; QuantileCI takes the first time, as print.survfit does for
// the median. It panics if p is outside [0, 1] or NaN.
func (c *Curve) QuantileCI(p float64) (lo, hi float64, loOK, hiOK bool) {
	checkProb(p)
	lower := make([]float64, len(c.surv))
	upper := make([]float64, len(c.surv))
	for j := range c.surv {
		l, u := limits(c.conf, c.z, c.surv[j], c.gw[j])
		lower[j], upper[j] = 1-l, 1-u
	}
	lo, loOK = c.findq(p, func(j int) float64 { return lower[j] })
	hi, hiOK = c.findq(p, func(j int) float64 { return upper[j] })
	return lo, hi, loOK, hiOK
}

// MedianCI returns the confidence limits of the median, QuantileCI(0.5): the
// numbers R's print(survfit(…)) shows as 0.95LCL and 0.95UCL.
func (c *Curve) MedianCI() (lo, hi float64, loOK, hiOK bool) { return c.QuantileCI(0.5) }

// FirstTimeCDFAtLeast returns the smallest time t with F(t) ≥ level, where
// F = 1 − S is the share of episodes ended by the event within t; with
// Tolerance, F(t) ≥ level − Tolerance. Because F only rises at event times
// the answer is an event time, except for level ≤ Tolerance, which every
// t ≥ 0 meets: the answer is then 0. Unlike Quantile there is no midpoint
// rule: the churn window X, the smallest t with F(t) ≥ q·F(τ), is the event
// time at which the level is first reached.
//
// ok is false when F stays below level (above F at the last event time).
// It panics on a NaN level.
func (c *Curve) FirstTimeCDFAtLeast(level float64) (t float64, ok bool) {
	if math.IsNaN(level) {
		panic("survival: FirstTimeCDFAtLeast(NaN)")
	}
	if level <= Tolerance {
		return 0, true
	}
	for j, s := range c.surv {
		if 1-s >= level-Tolerance {
			return c.stepTime[j], true
		}
	}
	return 0, false
}

func checkProb(p float64) {
	if !(p >= 0 && p <= 1) {
		panic(fmt.Sprintf("survival: probability %v not in [0, 1]", p))
	}
}

// findq is R survival 3.5.3's findq on the points (0, 0), (t_j, F_j) over
// the event times, where F is 1 − S or 1 − a confidence limit; points with
// F NaN are skipped. It returns the first time with F ≥ p, and the midpoint
// rule when F is within Tolerance of p. R sorts the points by F, which for
// an upper confidence curve that rises somewhere can select a later time;
// findq takes the first crossing in time, which for a monotone curve (S and
// the lower limits) is the same.
func (c *Curve) findq(p float64, f func(j int) float64) (float64, bool) {
	if p == 0 {
		return 0, true
	}
	n := len(c.stepTime)
	at := func(k int) (time, val float64) { // k = −1 is the origin
		if k < 0 {
			return 0, 0
		}
		return c.stepTime[k], f(k)
	}
	i1 := -2
	for k := -1; k < n; k++ {
		if _, v := at(k); v >= p-Tolerance {
			i1 = k
			break
		}
	}
	if i1 == -2 {
		return 0, false
	}
	t1, v1 := at(i1)
	if v1 >= p+Tolerance {
		return t1, true
	}
	for k := i1 + 1; k < n; k++ {
		if t2, v := at(k); v >= p+Tolerance {
			return (t1 + t2) / 2, true
		}
	}
	if _, last := at(n - 1); math.Abs(last-p) < Tolerance {
		return (t1 + c.MaxTime()) / 2, true
	}
	return 0, false
}
