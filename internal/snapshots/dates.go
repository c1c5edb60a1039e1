package snapshots

import (
	"fmt"
	"math/rand/v2"
	"slices"

	"ebb/internal/civil"
	"ebb/internal/problem"
)

// MinHistoryDays is the history every snapshot date needs before it, so
// that the 365-day features are complete.
const MinHistoryDays = 365

// Dates draws n distinct snapshot dates uniformly over [first + 365,
// through − horizon], sorted ascending. Fewer are returned when the range
// holds fewer days. A range that is empty is a problem saying what to change.
func Dates(first, through civil.Date, horizonDays, n int, seed uint64) ([]civil.Date, error) {
	lo := first + MinHistoryDays
	hi := through - civil.Date(horizonDays)
	if hi < lo {
		return nil, problem.New(problem.Invalid,
			"the data are too short for snapshots: a snapshot date needs %d days of history before it and %d days after it, so the orders must span at least %d days, and they span %d",
			MinHistoryDays, horizonDays, MinHistoryDays+horizonDays, int(through-first))
	}
	span := int(hi-lo) + 1
	if n <= 0 {
		return nil, fmt.Errorf("snapshots: want a positive number of dates, got %d", n)
	}
	rng := rand.New(rand.NewPCG(seed, 0x736e6170))
	var out []civil.Date
	if n >= span {
		for d := lo; d <= hi; d++ {
			out = append(out, d)
		}
		return out, nil
	}
	// Floyd's algorithm: n distinct values from span without a shuffle of
	// the whole range (Bentley & Floyd, CACM 1987, cited from memory).
	chosen := make(map[int]bool, n)
	for j := span - n; j < span; j++ {
		v := rng.IntN(j + 1)
		if chosen[v] {
			v = j
		}
		chosen[v] = true
	}
	for v := range chosen {
		out = append(out, lo+civil.Date(v))
	}
	slices.Sort(out)
	return out, nil
}
