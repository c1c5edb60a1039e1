package gaps

import (
	"math"
	"slices"
)

// Quantile returns the p-th sample quantile (0 ≤ p ≤ 1) of xs by Hyndman
// & Fan's definition 7, R's default: with x sorted and h = (n−1)p + 1,
// Q(p) = x(⌊h⌋) + (h − ⌊h⌋)(x(⌊h⌋+1) − x(⌊h⌋)). xs must be sorted
// ascending; it returns NaN for an empty slice.
func Quantile(sorted []float64, p float64) float64 {
	n := len(sorted)
	if n == 0 || math.IsNaN(p) {
		return math.NaN()
	}
	if p <= 0 {
		return sorted[0]
	}
	if p >= 1 {
		return sorted[n-1]
	}
	h := float64(n-1) * p
	lo := int(math.Floor(h))
	if lo+1 >= n {
		return sorted[n-1]
	}
	return sorted[lo] + (h-float64(lo))*(sorted[lo+1]-sorted[lo])
}

// sortedCopy returns xs sorted ascending, leaving xs alone.
func sortedCopy(xs []float64) []float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	return s
}

// ceilDays rounds a window up to whole days: X is always a whole number of
// days, and rounding up never flags a customer earlier than the method says.
func ceilDays(x float64) int {
	// Quantiles of integer gaps are often whole numbers computed with a tiny
	// floating-point excess (49.50000000000001); such noise must not add a day.
	return int(math.Ceil(x - 1e-9))
}
