package outcomes

import (
	"math"
	"strconv"

	"ebb/internal/evaluate"
)

// The format helpers of the sentences: whole percents for rates, one
// decimal for differences in percentage points, thousands separators for
// counts. They follow package evaluate's sentences, so pages read alike.

// pct writes a rate in [0, 1] as a whole percent, but never shows 0% for a
// rate above 0 or 100% for a rate below 1.
func pct(rate float64) string {
	p := math.Round(100 * rate)
	switch {
	case p == 0 && rate > 0:
		return "under 1%"
	case p == 100 && rate < 1:
		return "over 99%"
	}
	return strconv.Itoa(int(p)) + "%"
}

// percent writes part/whole as pct does; whole must be positive.
func percent(part, whole int) string {
	return pct(float64(part) / float64(whole))
}

// points writes the size of a rate difference in percentage points with
// one decimal, without sign: −0.0612 is "6.1".
func points(d float64) string {
	return strconv.FormatFloat(math.Abs(100*d), 'f', 1, 64)
}

// plural and count are evaluate's, so every sentence of ebb writes numbers
// the same way.
func plural(n int, one, many string) string { return evaluate.Plural(n, one, many) }
func count(n int) string                    { return evaluate.Count(n) }

// customers writes "1 customer" or "12,345 customers".
func customers(n int) string {
	return count(n) + " " + plural(n, "customer", "customers")
}
