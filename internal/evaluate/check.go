package evaluate

import (
	"math"

	"ebb/internal/problem"
)

// counts validates scores and labels for a ranking metric and returns the
// number of label-1 (pos) and label-0 (neg) rows.
func counts(scores []float64, labels []bool) (pos, neg int, err error) {
	if len(scores) != len(labels) {
		return 0, 0, problem.New(problem.Invalid, "There are %d scores but %d labels; each scored customer needs exactly one label.", len(scores), len(labels))
	}
	if len(scores) == 0 {
		return 0, 0, problem.New(problem.Invalid, "There are no scored customers to evaluate.")
	}
	for i, s := range scores {
		if math.IsNaN(s) {
			return 0, 0, problem.New(problem.Invalid, "The score of row %d is not a number, so the customers cannot be ranked.", i+1)
		}
		if labels[i] {
			pos++
		}
	}
	return pos, len(scores) - pos, nil
}

// bothClasses is counts plus a check that both labels occur.
func bothClasses(what string, scores []float64, labels []bool) (pos, neg int, err error) {
	pos, neg, err = counts(scores, labels)
	if err != nil {
		return 0, 0, err
	}
	if err := needBoth(what, pos, neg); err != nil {
		return 0, 0, err
	}
	return pos, neg, nil
}

func needBoth(what string, pos, neg int) error {
	if pos == 0 {
		return problem.New(problem.Invalid, "%s needs at least one customer who did not order again, and there are none.", what)
	}
	if neg == 0 {
		return problem.New(problem.Invalid, "%s needs at least one customer who ordered again, and there are none.", what)
	}
	return nil
}

// probabilities validates predicted probabilities: each in [0, 1].
func probabilities(probs []float64, labels []bool) (pos int, err error) {
	if len(probs) != len(labels) {
		return 0, problem.New(problem.Invalid, "There are %d predicted probabilities but %d labels; each scored customer needs exactly one label.", len(probs), len(labels))
	}
	if len(probs) == 0 {
		return 0, problem.New(problem.Invalid, "There are no scored customers to evaluate.")
	}
	for i, p := range probs {
		if !(p >= 0 && p <= 1) { // also rejects NaN
			return 0, problem.New(problem.Invalid, "The predicted probability of row %d is %v; probabilities must lie between 0 and 1.", i+1, p)
		}
		if labels[i] {
			pos++
		}
	}
	return pos, nil
}

// quantile7 is Hyndman & Fan definition 7 (R's default, numpy "linear") of
// an ascending slice; p in [0, 1].
func quantile7(sorted []float64, p float64) float64 {
	n := len(sorted)
	h := float64(n-1) * p
	lo := int(math.Floor(h))
	if lo >= n-1 {
		return sorted[n-1]
	}
	return sorted[lo] + (h-float64(lo))*(sorted[lo+1]-sorted[lo])
}
