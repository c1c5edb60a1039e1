package evaluate

import (
	"math"
	"slices"

	"ebb/internal/problem"
)

// eachGroupDesc calls fn for each distinct score, highest first, with the
// number of label-1 (pos) and label-0 (neg) rows that have it. Input must
// be validated (no NaN). The two classes are sorted apart and merged, which
// is faster than sorting (score, label) pairs.
func eachGroupDesc(scores []float64, labels []bool, fn func(score float64, pos, neg int)) {
	buf := make([]float64, len(scores)) // label 1 from the front, label 0 from the back
	np, nn := 0, len(scores)
	for i, s := range scores {
		if labels[i] {
			buf[np] = s
			np++
		} else {
			nn--
			buf[nn] = s
		}
	}
	p, n := buf[:np], buf[np:]
	slices.Sort(p)
	slices.Sort(n)
	i, j := len(p)-1, len(n)-1
	for i >= 0 || j >= 0 {
		var s float64
		switch {
		case i < 0:
			s = n[j]
		case j < 0:
			s = p[i]
		default:
			s = max(p[i], n[j])
		}
		gp, gn := 0, 0
		for i >= 0 && p[i] == s {
			gp++
			i--
		}
		for j >= 0 && n[j] == s {
			gn++
			j--
		}
		fn(s, gp, gn)
	}
}

// ROCAUC returns the area under the ROC curve: the probability that a
// random label-1 customer scores higher than a random label-0 customer,
// with a tie counted as ½. This is the Mann–Whitney U divided by
// n_pos·n_neg, and equals the trapezoidal area under ROCCurve. Both labels
// must occur.
func ROCAUC(scores []float64, labels []bool) (float64, error) {
	pos, neg, err := bothClasses("ROC AUC", scores, labels)
	if err != nil {
		return 0, err
	}
	var u float64 // Mann–Whitney U for the label-1 group
	fp := 0       // label-0 rows with a score above the current group
	eachGroupDesc(scores, labels, func(_ float64, gp, gn int) {
		below := neg - fp - gn
		u += float64(gp)*float64(below) + 0.5*float64(gp)*float64(gn)
		fp += gn
	})
	return u / (float64(pos) * float64(neg)), nil
}

// ROCPoint is one point of the ROC curve: flagging every customer with
// score ≥ Threshold gives the false and true positive rates.
type ROCPoint struct {
	Threshold     float64 // +Inf for the starting point (nobody flagged)
	FPR, TPR      float64
	Flagged       int
	TruePositives int
}

// ROCCurve returns the ROC curve through every distinct score, from
// (0, 0) at threshold +Inf to (1, 1) at the lowest score (scikit-learn's
// roc_curve with drop_intermediate=False, except that sklearn 1.2 labels
// the first point max+1 instead of +Inf). Both labels must occur.
func ROCCurve(scores []float64, labels []bool) ([]ROCPoint, error) {
	pos, neg, err := bothClasses("An ROC curve", scores, labels)
	if err != nil {
		return nil, err
	}
	pts := []ROCPoint{{Threshold: math.Inf(1)}}
	tp, fp := 0, 0
	eachGroupDesc(scores, labels, func(score float64, gp, gn int) {
		tp += gp
		fp += gn
		pts = append(pts, ROCPoint{
			Threshold: score,
			FPR:       float64(fp) / float64(neg), TPR: float64(tp) / float64(pos),
			Flagged: tp + fp, TruePositives: tp,
		})
	})
	return pts, nil
}

// PRPoint is one point of the precision–recall curve: the list of every
// customer with score ≥ Threshold.
type PRPoint struct {
	Threshold         float64
	Precision, Recall float64
	Flagged           int
	TruePositives     int
}

// PRCurve returns precision and recall at every distinct score, highest
// threshold first. Unlike scikit-learn's precision_recall_curve it omits
// the conventional (precision 1, recall 0) end point, which is not data,
// and lists points in decreasing threshold order. Both labels must occur.
func PRCurve(scores []float64, labels []bool) ([]PRPoint, error) {
	pos, _, err := bothClasses("A precision–recall curve", scores, labels)
	if err != nil {
		return nil, err
	}
	var pts []PRPoint
	tp, fp := 0, 0
	eachGroupDesc(scores, labels, func(score float64, gp, gn int) {
		tp += gp
		fp += gn
		pts = append(pts, PRPoint{
			Threshold: score,
			Precision: float64(tp) / float64(tp+fp), Recall: float64(tp) / float64(pos),
			Flagged: tp + fp, TruePositives: tp,
		})
	})
	return pts, nil
}

// AveragePrecision returns scikit-learn's average precision:
// Σ (R_n − R_{n−1})·P_n over the distinct score thresholds in decreasing
// order, tied scores entering together, R_0 = 0, with no interpolation.
// Both labels must occur.
func AveragePrecision(scores []float64, labels []bool) (float64, error) {
	pos, _, err := bothClasses("Average precision", scores, labels)
	if err != nil {
		return 0, err
	}
	ap := 0.0
	tp, fp := 0, 0
	eachGroupDesc(scores, labels, func(_ float64, gp, gn int) {
		tp += gp
		fp += gn
		if gp > 0 {
			ap += float64(gp) / float64(pos) * float64(tp) / float64(tp+fp)
		}
	})
	return ap, nil
}

// HanleyMcNeilSE is the standard error of an ROC AUC by Hanley & McNeil
// (1982, Radiology 143, 29–36): with A the AUC, Q1 = A/(2 − A) and
// Q2 = 2A²/(1 + A),
// SE = √[(A(1−A) + (n_pos−1)(Q1−A²) + (n_neg−1)(Q2−A²)) / (n_pos·n_neg)].
// It rests on an exponential approximation; the bootstrap is the
// assumption-free alternative.
func HanleyMcNeilSE(auc float64, pos, neg int) (float64, error) {
	if err := needBoth("A standard error of ROC AUC", pos, neg); err != nil {
		return 0, err
	}
	if !(auc >= 0 && auc <= 1) {
		return 0, problem.New(problem.Invalid, "An ROC AUC must lie between 0 and 1, not %v.", auc)
	}
	q1 := auc / (2 - auc)
	q2 := 2 * auc * auc / (1 + auc)
	a2 := auc * auc
	v := (auc*(1-auc) + float64(pos-1)*(q1-a2) + float64(neg-1)*(q2-a2)) / (float64(pos) * float64(neg))
	return math.Sqrt(max(v, 0)), nil
}
