package web

import (
	"strconv"
	"strings"

	"ebb/internal/problem"
)

// numberIn reads a number typed into a form and checks it lies in
// [lo, hi]; what names it in the sentence the user sees. NaN and the
// infinities are refused too (a check written x < lo || x > hi lets NaN
// through).
func numberIn(text, what string, lo, hi float64) (float64, error) {
	x, err := strconv.ParseFloat(strings.TrimSpace(text), 64)
	if err != nil || !(x >= lo && x <= hi) {
		return 0, problem.New(problem.Invalid, "%s must be a number from %g to %g", what, lo, hi)
	}
	return x, nil
}
