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
// 0.3 and 0.2 when zero.
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
	parts := make([]Part, n)
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
	kept := [4]int{}
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
	if kept[Train] == 0 || kept[Validation] == 0 {
		// The validation slice spans a seventh of the dates' range; the
		// embargo needs it longer than H.
		return nil, problem.New(problem.Invalid,
			"after the %d-day embargo no %s date is left: the snapshot dates span %d days, and the validation slice (a seventh of that) must be longer than the horizon; use a shorter horizon or a longer history",
			horizonDays, map[bool]string{true: "training", false: "validation"}[kept[Train] == 0], int(dates[n-1]-dates[0]))
	}
	return parts, nil
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
