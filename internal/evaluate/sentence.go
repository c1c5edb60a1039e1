package evaluate

import (
	"fmt"
	"math"
	"strconv"
)

// PrecisionSentence describes a list's precision in words, e.g. "Of the
// 412 customers on this list, 287 (70%) did not order again within 90
// days." size is the list size, positives the customers on it who did not
// order again, horizonDays the horizon H.
func PrecisionSentence(size, positives, horizonDays int) string {
	if size <= 0 {
		return "This list is empty."
	}
	return fmt.Sprintf("Of the %s %s on this list, %s (%s) did not order again within %s %s.",
		Count(size), Plural(size, "customer", "customers"), Count(positives), percent(positives, size),
		Count(horizonDays), Plural(horizonDays, "day", "days"))
}

// RecallSentence describes a list's recall in words, e.g. "Of the 350
// customers who did not order again, 287 (82%) were on the list."
// allPositives is the number of scored customers who did not order again,
// positives those of them on the list.
func RecallSentence(allPositives, positives int) string {
	if allPositives <= 0 {
		return "No scored customer failed to order again, so there was no one for the list to find."
	}
	verb := "were"
	if positives == 1 {
		verb = "was"
	}
	return fmt.Sprintf("Of the %s %s who did not order again, %s (%s) %s on the list.",
		Count(allPositives), Plural(allPositives, "customer", "customers"), Count(positives), percent(positives, allPositives), verb)
}

// percent rounds part/whole to a whole percent, but never shows 0% for a
// non-zero part or 100% for less than the whole.
func percent(part, whole int) string {
	p := math.Round(100 * float64(part) / float64(whole))
	switch {
	case p == 0 && part > 0:
		return "under 1%"
	case p == 100 && part < whole:
		return "over 99%"
	}
	return strconv.Itoa(int(p)) + "%"
}

// Plural picks the word for n: one when n is 1, many otherwise.
func Plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

// Count writes n with thousands separators: 12,345.
func Count(n int) string {
	s := strconv.Itoa(n)
	neg := n < 0
	if neg {
		s = s[1:]
	}
	for i := len(s) - 3; i > 0; i -= 3 {
		s = s[:i] + "," + s[i:]
	}
	if neg {
		s = "-" + s
	}
	return s
}
