package lists

import "ebb/internal/problem"

// Band is a customer's risk band on a list, named from the calibrated
// probability of not ordering again within the horizon.
type Band string

// The three bands, highest risk first.
const (
	High   Band = "high"
	Medium Band = "medium"
	Low    Band = "low"
)

// Bands holds the lower edges of the high and medium bands on the calibrated
// probability: a score ≥ High is high, a score ≥ Medium is medium, anything
// else is low.
type Bands struct {
	High, Medium float64
}

// DefaultBands puts 7 in 10 and above in the high band and 4 in 10 and
// above in the medium band (a starting point, not a published rule).
var DefaultBands = Bands{High: 0.7, Medium: 0.4}

// Validate reports, as a sentence for the user, why b cannot be used: both
// edges must lie strictly between 0 and 1 and the high edge must be above
// the medium one.
func (b Bands) Validate() error {
	if !(b.Medium > 0 && b.Medium < 1 && b.High > 0 && b.High < 1) {
		return problem.New(problem.Invalid, "Band thresholds must lie strictly between 0 and 1 (got high %g, medium %g).", b.High, b.Medium)
	}
	if b.Medium >= b.High {
		return problem.New(problem.Invalid, "The high-risk threshold (%g) must be above the medium-risk threshold (%g).", b.High, b.Medium)
	}
	return nil
}

// Of returns the band of probability p. A NaN p is low.
func (b Bands) Of(p float64) Band {
	switch {
	case p >= b.High:
		return High
	case p >= b.Medium:
		return Medium
	}
	return Low
}
