package evaluate

import (
	"math"
	"slices"
	"sort"

	"ebb/internal/problem"
)

// LogLossEpsilon is how far log loss keeps probabilities from 0 and 1:
// each p is clipped to [ε, 1 − ε] before taking logarithms, so a confident
// wrong prediction costs at most −ln ε ≈ 36.04 instead of infinity. ε is
// float64 machine epsilon, 2⁻⁵², as in scikit-learn ≥ 1.2 (eps="auto";
// older releases used 1e-15).
const LogLossEpsilon = 0x1p-52

// Brier returns the Brier score, the mean of (p − y)² with y = 1 for a
// customer who did not order again. Lower is better; 0 is perfect. Each
// probability must lie in [0, 1]; one class alone is allowed.
func Brier(probs []float64, labels []bool) (float64, error) {
	if _, err := probabilities(probs, labels); err != nil {
		return 0, err
	}
	s := 0.0
	for i, p := range probs {
		d := p
		if labels[i] {
			d = p - 1
		}
		s += d * d
	}
	return s / float64(len(probs)), nil
}

// LogLoss returns −mean[y ln p + (1 − y) ln(1 − p)] with p clipped to
// [LogLossEpsilon, 1 − LogLossEpsilon]. Each probability must lie in
// [0, 1]; one class alone is allowed.
func LogLoss(probs []float64, labels []bool) (float64, error) {
	if _, err := probabilities(probs, labels); err != nil {
		return 0, err
	}
	lo, hi := LogLossEpsilon, 1-LogLossEpsilon
	s := 0.0
	for i, p := range probs {
		p = min(max(p, lo), hi)
		if labels[i] {
			s -= math.Log(p)
		} else {
			s -= math.Log1p(-p)
		}
	}
	return s / float64(len(probs)), nil
}

// CalibrationBin is one row of a calibration table: the customers whose
// predicted probability falls in (Lower, Upper] (the first bin also takes
// Lower itself).
type CalibrationBin struct {
	Lower, Upper  float64
	Count         int
	Positives     int     // customers in the bin who did not order again
	MeanPredicted float64 // mean predicted probability in the bin
	ObservedRate  float64 // Positives / Count
}

// CalibrationUniform bins predicted probabilities into `bins` equal-width
// bins on [0, 1]; edge k is k/bins and a probability on an inner edge goes
// to the lower bin (numpy searchsorted, side "left", as scikit-learn's
// calibration_curve with strategy "uniform"). Empty bins are left out.
func CalibrationUniform(probs []float64, labels []bool, bins int) ([]CalibrationBin, error) {
	if bins < 1 {
		return nil, problem.New(problem.Invalid, "A calibration table needs at least one bin, not %d.", bins)
	}
	if _, err := probabilities(probs, labels); err != nil {
		return nil, err
	}
	edges := make([]float64, bins+1)
	for k := range edges {
		edges[k] = float64(k) / float64(bins)
	}
	return calibrate(probs, labels, edges), nil
}

// CalibrationQuantile bins predicted probabilities into `bins` bins holding
// about equally many customers: the edges are the 0, 1/bins, …, 1
// quantiles of the probabilities (Hyndman & Fan definition 7), as
// scikit-learn's calibration_curve with strategy "quantile". Tied
// probabilities can make bins empty; empty bins are left out.
func CalibrationQuantile(probs []float64, labels []bool, bins int) ([]CalibrationBin, error) {
	if bins < 1 {
		return nil, problem.New(problem.Invalid, "A calibration table needs at least one bin, not %d.", bins)
	}
	if _, err := probabilities(probs, labels); err != nil {
		return nil, err
	}
	sorted := slices.Clone(probs)
	slices.Sort(sorted)
	edges := make([]float64, bins+1)
	for k := range edges {
		edges[k] = quantile7(sorted, float64(k)/float64(bins))
	}
	return calibrate(probs, labels, edges), nil
}

func calibrate(probs []float64, labels []bool, edges []float64) []CalibrationBin {
	bins := len(edges) - 1
	inner := edges[1:bins]
	count := make([]int, bins)
	posn := make([]int, bins)
	sum := make([]float64, bins)
	for i, p := range probs {
		b := sort.SearchFloat64s(inner, p) // number of inner edges < p
		count[b]++
		sum[b] += p
		if labels[i] {
			posn[b]++
		}
	}
	var out []CalibrationBin
	for b := range bins {
		if count[b] == 0 {
			continue
		}
		out = append(out, CalibrationBin{
			Lower: edges[b], Upper: edges[b+1],
			Count: count[b], Positives: posn[b],
			MeanPredicted: sum[b] / float64(count[b]),
			ObservedRate:  float64(posn[b]) / float64(count[b]),
		})
	}
	return out
}
