package survival

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// ConfType is the transformation under which the pointwise confidence
// interval of S(t) is built, named as in R's survfit(conf.type = …).
type ConfType int

const (
	// ConfLog is R's default conf.type = "log": S·exp(∓z·√G), the upper
	// limit truncated at 1. Undefined (NaN) where S = 0.
	ConfLog ConfType = iota
	// ConfLogLog is conf.type = "log-log" (Kalbfleisch & Prentice):
	// an interval for log(−log S) mapped back, S^exp(±z·√G/|log S|). It
	// stays inside (0, 1) without truncation. Undefined (NaN) where S = 0
	// or S = 1.
	ConfLogLog
	// ConfPlain is conf.type = "plain": S ∓ z·SE(S), truncated to [0, 1].
	// Where S = 0 the standard error is undefined and so are the limits.
	ConfPlain
)

// String returns the name R uses for t ("log", "log-log", "plain").
func (t ConfType) String() string {
	switch t {
	case ConfLog:
		return "log"
	case ConfLogLog:
		return "log-log"
	case ConfPlain:
		return "plain"
	}
	return fmt.Sprintf("ConfType(%d)", int(t))
}

// DefaultConfLevel is the two-sided coverage of the intervals of a new Curve.
const DefaultConfLevel = 0.95

// normalQuantile returns z with P(|Z| ≤ z) = level for a standard normal Z,
// i.e. qnorm(1 − (1 − level)/2) in R. gonum's quantile uses Wichura's
// AS 241, as R's qnorm does, and gives the same float64 (1.9599639845400536
// for 0.95); math.Erfinv is up to four units in the last place away.
func normalQuantile(level float64) float64 {
	return distuv.UnitNormal.Quantile(1 - (1-level)/2)
}

// limits returns the confidence limits at a point where the curve is s and
// the Greenwood sum (the variance of log S) is g, with z the normal
// quantile. It follows R survival 3.5.3's survfit_confint with logse = TRUE.
func limits(ct ConfType, z, s, g float64) (lo, hi float64) {
	se := math.Sqrt(g) // standard error of log S
	switch ct {
	case ConfLog:
		if s == 0 || math.IsNaN(se) || math.IsInf(se, 0) {
			return math.NaN(), math.NaN()
		}
		ls := math.Log(s)
		return math.Exp(ls - z*se), math.Min(math.Exp(ls+z*se), 1)
	case ConfLogLog:
		if s == 0 || s == 1 || math.IsNaN(se) || math.IsInf(se, 0) {
			return math.NaN(), math.NaN()
		}
		ls := math.Log(s)
		w := z * se / ls // negative, since log S < 0
		ll := math.Log(-ls)
		return math.Exp(-math.Exp(ll - w)), math.Exp(-math.Exp(ll + w))
	case ConfPlain:
		sd := s * se
		if math.IsNaN(sd) {
			return math.NaN(), math.NaN()
		}
		return math.Max(s-z*sd, 0), math.Min(s+z*sd, 1)
	}
	panic(fmt.Sprintf("survival: unknown confidence type %d", int(ct)))
}
