package outcomes

import (
	"fmt"
	"maps"
	"math"
	"slices"

	"ebb/internal/evaluate"
	"ebb/internal/problem"
)

// Scored is one active customer scored on a list's date, with their
// outcome once the horizon has passed: the input of Realized.
type Scored struct {
	Probability float64 // calibrated probability of no reorder within H, in [0, 1]
	Selected    bool    // on the list: contacted, or withheld as a holdout member
	Holdout     bool    // in the holdout of the list's period (selected or not)
	Band        string  // risk band; "" for none
	NoReorder   bool    // did not order again within H days of the list date
}

// Proportion is x of n customers with the share's Wilson 95% interval.
type Proportion struct {
	N, X         int
	Rate, Lo, Hi float64 // X/N and its interval; all 0 when N = 0
}

// CalibrationRow compares predicted and realized no-reorder rates for a
// group of holdout members.
type CalibrationRow struct {
	Band string // the band, in by-band rows; "" otherwise
	// Lower and Upper bound the scores of a decile row: (Lower, Upper], the
	// first decile also takes Lower itself. 0 in other rows.
	Lower, Upper  float64
	MeanPredicted float64    // mean calibrated probability
	Realized      Proportion // customers who did not order again
}

// Accuracy is how a list turned out, measured on customers whose outcome
// the campaign did not change.
type Accuracy struct {
	HorizonDays int
	ListSize    int // selected customers: contacted and withheld

	// Precision is the share of the list's holdout members (selected and
	// withheld, so untreated) who did not order again.
	Precision         Proportion
	PrecisionSentence string

	// Recall is estimated: the list would have held about
	// ExpectedOnList = Precision.Rate × ListSize customers who do not order
	// again without contact, and MissedNoReorder customers not selected
	// did not order again, so Recall = ExpectedOnList / (ExpectedOnList +
	// MissedNoReorder); 0 when both are 0.
	ExpectedOnList  float64
	MissedNoReorder int
	Recall          float64
	RecallSentence  string

	// Calibration compares predicted and realized rates on every holdout
	// member scored on the date (selected or not: all are untreated, and
	// together they span the whole range of scores), overall, by band
	// (sorted by name; members without a band only overall) and by decile
	// of their scores.
	Calibration         CalibrationRow
	CalibrationSentence string
	ByBand              []CalibrationRow
	ByDecile            []CalibrationRow
}

// Realized measures a list's accuracy after its horizon of horizonDays
// has passed, from every customer scored on its date. Precision and
// calibration use only holdout members, so a working campaign does not
// make the model look worse; recall is the estimate described at Accuracy.
//
// It is an Invalid problem when there are no rows, a probability is not
// in [0, 1], horizonDays < 1, or the list has no holdout members (then
// there is nothing untreated to measure on).
func Realized(rows []Scored, horizonDays int) (Accuracy, error) {
	if horizonDays < 1 {
		return Accuracy{}, problem.New(problem.Invalid, "The horizon must be at least one day, not %d.", horizonDays)
	}
	if len(rows) == 0 {
		return Accuracy{}, problem.New(problem.Invalid, "No customers were scored on this list's date, so there is nothing to measure.")
	}
	acc := Accuracy{HorizonDays: horizonDays}
	var probs []float64 // holdout members
	var labels []bool
	var prec [2]int // selected holdout members: n, no reorder
	for i, r := range rows {
		if !(r.Probability >= 0 && r.Probability <= 1) {
			return Accuracy{}, problem.New(problem.Invalid, "The predicted probability of row %d is %v; probabilities must lie between 0 and 1.", i+1, r.Probability)
		}
		switch {
		case r.Selected:
			acc.ListSize++
		case r.NoReorder:
			acc.MissedNoReorder++
		}
		if r.Holdout {
			probs = append(probs, r.Probability)
			labels = append(labels, r.NoReorder)
			if r.Selected {
				prec[0]++
				if r.NoReorder {
					prec[1]++
				}
			}
		}
	}
	switch {
	case len(probs) == 0:
		return Accuracy{}, problem.New(problem.Invalid, "No scored customer was in the holdout, so this list's accuracy cannot be measured: every outcome on it may have been changed by the campaign.")
	case prec[0] == 0:
		return Accuracy{}, problem.New(problem.Invalid, "None of the %s on this list was in the holdout, so its accuracy cannot be measured: every outcome on it may have been changed by the campaign.", customers(acc.ListSize))
	}
	acc.Precision = proportion(prec[1], prec[0])
	acc.PrecisionSentence = fmt.Sprintf("Of the %s on this list's holdout, %s (%s) did not order again within %s %s.",
		customers(prec[0]), count(prec[1]), percent(prec[1], prec[0]), count(horizonDays), plural(horizonDays, "day", "days"))

	acc.ExpectedOnList = acc.Precision.Rate * float64(acc.ListSize)
	if all := acc.ExpectedOnList + float64(acc.MissedNoReorder); all > 0 {
		acc.Recall = acc.ExpectedOnList / all
	}
	acc.RecallSentence = recallSentence(acc)

	acc.Calibration = calibrationRow(probs, labels)
	acc.CalibrationSentence = fmt.Sprintf("On the holdout, the model expected %s of customers not to order again within %s %s; %s did not (95%% interval %s to %s).",
		pct(acc.Calibration.MeanPredicted), count(horizonDays), plural(horizonDays, "day", "days"),
		pct(acc.Calibration.Realized.Rate), pct(acc.Calibration.Realized.Lo), pct(acc.Calibration.Realized.Hi))
	acc.ByBand = bandRows(rows)
	bins, err := evaluate.CalibrationQuantile(probs, labels, 10)
	if err != nil {
		return Accuracy{}, fmt.Errorf("calibration by decile: %w", err)
	}
	for _, b := range bins {
		acc.ByDecile = append(acc.ByDecile, CalibrationRow{
			Lower: b.Lower, Upper: b.Upper,
			MeanPredicted: b.MeanPredicted,
			Realized:      proportion(b.Positives, b.Count),
		})
	}
	return acc, nil
}

func recallSentence(acc Accuracy) string {
	all := acc.ExpectedOnList + float64(acc.MissedNoReorder)
	if all == 0 {
		return "No scored customer is estimated to have failed to order again, so there was no one for the list to find."
	}
	return fmt.Sprintf("Of an estimated %s customers who would not have ordered again without contact, about %s (%s) were on the list.",
		count(int(math.Round(all))), count(int(math.Round(acc.ExpectedOnList))), pct(acc.Recall))
}

// proportion returns x of n with its Wilson interval; zeros for n = 0.
func proportion(x, n int) Proportion {
	if n == 0 {
		return Proportion{}
	}
	lo, hi := wilson(x, n, Z95)
	return Proportion{N: n, X: x, Rate: float64(x) / float64(n), Lo: lo, Hi: hi}
}

// calibrationRow summarises the holdout members given by their
// probabilities and labels (at least one).
func calibrationRow(probs []float64, labels []bool) CalibrationRow {
	sum, x := 0.0, 0
	for i, p := range probs {
		sum += p
		if labels[i] {
			x++
		}
	}
	return CalibrationRow{MeanPredicted: sum / float64(len(probs)), Realized: proportion(x, len(probs))}
}

// bandRows returns one calibration row per band among the holdout members.
func bandRows(rows []Scored) []CalibrationRow {
	type acc struct {
		probs  []float64
		labels []bool
	}
	by := map[string]*acc{}
	for _, r := range rows {
		if !r.Holdout || r.Band == "" {
			continue
		}
		a := by[r.Band]
		if a == nil {
			a = &acc{}
			by[r.Band] = a
		}
		a.probs = append(a.probs, r.Probability)
		a.labels = append(a.labels, r.NoReorder)
	}
	var out []CalibrationRow
	for _, band := range slices.Sorted(maps.Keys(by)) {
		row := calibrationRow(by[band].probs, by[band].labels)
		row.Band = band
		out = append(out, row)
	}
	return out
}
