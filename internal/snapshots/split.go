package snapshots

import (
	"ebb/internal/civil"
	"ebb/internal/problem"
)

// Part is the period a snapshot date belongs to.
type Part int8

const (
	Dropped Part = iota // embargoed: its label window reaches into the next period
	Train
	Validation
	Test
)

func (p Part) String() string {
	return [...]string{"dropped", "train", "validation", "test"}[p]
}

// Split assigns each of the sorted dates to a part: the last 30% of dates
// are the test period; of the earlier ones the last 20% are the validation
// slice; a date whose label window (t, t+H] reaches the first date of the
// next period is dropped (the embargo). testShare and validShare default to
// 0.3 and 0.2 when zero. When the embargo would leave fewer than one
// validation date in twenty, the validation slice grows into the earlier
// dates (as far as training dates remain) until it keeps that many or as
// many as it can: with a horizon long against the history, a 20% slice can
// lie entirely inside the embargo.
func Split(dates []civil.Date, horizonDays int, testShare, validShare float64) ([]Part, error) {
	if testShare == 0 {
		testShare = 0.3
	}
	if validShare == 0 {
		validShare = 0.2
	}
	n := len(dates)
	nTest := int(float64(n)*testShare + 0.5)
	rest := n - nTest
	nValid := int(float64(rest)*validShare + 0.5)
	nTrain := rest - nValid
	if nTest < 1 || nValid < 1 || nTrain < 1 {
		return nil, problem.New(problem.Invalid, "%d snapshot dates are too few to split into training, validation and test periods; use more snapshots or a longer history", n)
	}
	// The validation slice must keep at least minValid dates after the
	// embargo before the test period. When the share above keeps fewer (a
	// horizon long against the history), the slice grows into the earlier
	// dates until it does, as long as training dates remain.
	minValid := max(1, n/20)
	parts, kept := assign(dates, horizonDays, nTrain, nValid)
	for v := nValid; kept[Validation] < minValid && v < rest-1; v++ {
		if p, k := assign(dates, horizonDays, rest-v-1, v+1); k[Train] > 0 && k[Validation] > kept[Validation] {
			parts, kept = p, k
		}
	}
	if kept[Train] == 0 || kept[Validation] == 0 {
		return nil, problem.New(problem.Invalid,
			"after the %d-day embargo no %s date is left: the snapshot dates span %d days, and the validation slice must be longer than the horizon with training dates before it; use a shorter horizon or a longer history",
			horizonDays, map[bool]string{true: "training", false: "validation"}[kept[Train] == 0], int(dates[n-1]-dates[0]))
	}
	return parts, nil
}

// assign gives the first nTrain dates to training, the next nValid to
// validation and the rest to the test period, then drops the dates whose
// label window (t, t+H] reaches the next period.
func assign(dates []civil.Date, horizonDays, nTrain, nValid int) ([]Part, [4]int) {
	parts := make([]Part, len(dates))
	for i := range parts {
		switch {
		case i >= nTrain+nValid:
			parts[i] = Test
		case i >= nTrain:
			parts[i] = Validation
		default:
			parts[i] = Train
		}
	}
	h := civil.Date(horizonDays)
	firstValid, firstTest := dates[nTrain], dates[nTrain+nValid]
	var kept [4]int
	for i, t := range dates {
		switch parts[i] {
		case Train:
			if t+h >= firstValid {
				parts[i] = Dropped
			}
		case Validation:
			if t+h >= firstTest {
				parts[i] = Dropped
			}
		}
		kept[parts[i]]++
	}
	return parts, kept
}

// Folds returns k rolling-origin splits: fold k−1 is Split itself (the
// latest test period); each earlier fold ends its test period where the
// next fold's began, on the dates before it. Headline figures come from
// the last fold.
func Folds(dates []civil.Date, horizonDays, k int) ([][]Part, error) {
	if k < 1 {
		k = 1
	}
	out := make([][]Part, k)
	end := len(dates)
	for f := k - 1; f >= 0; f-- {
		parts, err := Split(dates[:end], horizonDays, 0, 0)
		if err != nil {
			return nil, err
		}
		full := make([]Part, len(dates)) // dates after end are Dropped in this fold
		copy(full, parts)
		out[f] = full
		nTest := 0
		for _, p := range parts {
			if p == Test {
				nTest++
			}
		}
		end -= nTest
	}
	return out, nil
}
