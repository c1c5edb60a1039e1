package evaluate

import (
	"math"
	"slices"
	"testing"
)

// Expected values below are copied from shared/reference/README.md (see
// testdata/README.md); each case names its check and tolerance.

func fawcett() ([]float64, []bool) {
	s := []float64{.9, .8, .7, .6, .55, .54, .53, .52, .51, .505, .4, .39, .38, .37, .36, .35, .34, .33, .30, .1}
	var y []bool
	for _, c := range "ppnpppnnpnpnpnnnpnpn" {
		y = append(y, c == 'p')
	}
	return s, y
}

func TestROCAUCReference(t *testing.T) {
	hmS, hmY := hanleyMcNeil()
	fS, fY := fawcett()
	bS := func(col string) func() ([]float64, []bool) {
		return func() ([]float64, []bool) { return breastCancer(t, col) }
	}
	cases := []struct {
		name string
		data func() ([]float64, []bool)
		want float64
		tol  float64
	}{
		// Check 3a: Hanley & McNeil (1982) Table 1 (recalled), 1321/1479; sklearn roc_auc_score, scipy mannwhitneyu.
		{"hanley mcneil 1982 table 1", func() ([]float64, []bool) { return hmS, hmY }, 0.8931710615, 1e-9},
		// Check 3b: Fawcett (2006) Fig. 3 (recalled list); sklearn roc_auc_score = 0.68.
		{"fawcett 2006 fig 3", func() ([]float64, []bool) { return fS, fY }, 0.68, 1e-12},
		// Check 3c: breast_cancer, ties counted ½; sklearn roc_auc_score, scipy U, pair count.
		{"breast cancer mean_radius", bS("mean_radius"), 0.937516516040, 1e-9},
		{"breast cancer mean_texture", bS("mean_texture"), 0.775824480736, 1e-9},
		{"breast cancer worst_concave_points", bS("worst_concave_points"), 0.966703662597, 1e-9},
		{"breast cancer mean_smoothness", bS("mean_smoothness"), 0.722041646847, 1e-9},
		// Check 3a as printed: exact fraction 1321/1479.
		{"hanley mcneil exact fraction", func() ([]float64, []bool) { return hmS, hmY }, 1321.0 / 1479, 1e-12},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s, y := c.data()
			got, err := ROCAUC(s, y)
			if err != nil {
				t.Fatal(err)
			}
			near(t, "ROCAUC", got, c.want, c.tol)
			// The trapezoidal area under the full ROC curve is the same number.
			pts, err := ROCCurve(s, y)
			if err != nil {
				t.Fatal(err)
			}
			area := 0.0
			for i := 1; i < len(pts); i++ {
				area += (pts[i].FPR - pts[i-1].FPR) * (pts[i].TPR + pts[i-1].TPR) / 2
			}
			near(t, "trapezoid area", area, c.want, c.tol)
		})
	}
}

// Check 3c: for mean_radius, counting ties as 0 or 1 gives 0.937318323556
// and 0.937714708525; ROCAUC must give neither (it counts ½).
func TestROCAUCTiesNotZeroOrOne(t *testing.T) {
	s, y := breastCancer(t, "mean_radius")
	got, err := ROCAUC(s, y)
	if err != nil {
		t.Fatal(err)
	}
	for _, wrong := range []float64{0.937318323556, 0.937714708525} {
		if math.Abs(got-wrong) < 1e-6 {
			t.Errorf("ROCAUC = %.12f matches a wrong tie convention %.12f", got, wrong)
		}
	}
}

func TestHanleyMcNeilSEReference(t *testing.T) {
	// Check 3a: SE = 0.0324865796 (published 0.032, from memory), tolerance 1e-9.
	got, err := HanleyMcNeilSE(1321.0/1479, 51, 58)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "HanleyMcNeilSE", got, 0.0324865796, 1e-9)
}

func TestROCCurveReference(t *testing.T) {
	hmS, hmY := hanleyMcNeil()
	fS, fY := fawcett()
	type pt struct{ fpr, tpr float64 }
	cases := []struct {
		name   string
		s      []float64
		y      []bool
		want   []pt
		thresh []float64
	}{
		// Check 3a: thresholds rating ≥ 5, 4, 3, 2, 1; tolerance 1e-12 (exact fractions).
		{"hanley mcneil", hmS, hmY, []pt{{0, 0}, {2. / 58, 33. / 51}, {13. / 58, 44. / 51}, {19. / 58, 46. / 51}, {25. / 58, 48. / 51}, {1, 1}},
			[]float64{math.Inf(1), 5, 4, 3, 2, 1}},
		// Check 3b: sklearn roc_curve(drop_intermediate=False); tolerance 1e-12.
		{"fawcett", fS, fY, []pt{{0, 0}, {0, .1}, {0, .2}, {.1, .2}, {.1, .3}, {.1, .4}, {.1, .5}, {.2, .5}, {.3, .5}, {.3, .6}, {.4, .6}, {.4, .7}, {.5, .7}, {.5, .8}, {.6, .8}, {.7, .8}, {.8, .8}, {.8, .9}, {.9, .9}, {.9, 1}, {1, 1}},
			append([]float64{math.Inf(1)}, fS...)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := ROCCurve(c.s, c.y)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(c.want) {
				t.Fatalf("%d points, want %d", len(got), len(c.want))
			}
			for i, w := range c.want {
				near(t, "FPR", got[i].FPR, w.fpr, 1e-12)
				near(t, "TPR", got[i].TPR, w.tpr, 1e-12)
				if got[i].Threshold != c.thresh[i] {
					t.Errorf("point %d threshold %v, want %v", i, got[i].Threshold, c.thresh[i])
				}
			}
		})
	}
}

func TestAveragePrecisionReference(t *testing.T) {
	bS, bY := exampleB()
	cases := []struct {
		name string
		s    []float64
		y    []bool
		want float64
	}{
		// Check 4 example A: sklearn's average_precision_score docstring, 5/6.
		{"sklearn doc example", []float64{0.1, 0.4, 0.35, 0.8}, labelsOf(0, 0, 1, 1), 0.833333333333},
		// Check 4 example B (ties): 251/336 by hand, sklearn 0.747023809524.
		{"ten items with ties", bS, bY, 251.0 / 336},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := AveragePrecision(c.s, c.y)
			if err != nil {
				t.Fatal(err)
			}
			near(t, "AveragePrecision", got, c.want, 1e-12) // check 4 tolerance 1e-12 (example A printed to 12 digits)
		})
	}
}

func TestPRCurveReference(t *testing.T) {
	// Check 4: sklearn precision_recall_curve on example B, read from the
	// highest threshold down, without sklearn's final (1, 0) point.
	// Tolerance 1e-12 (values are the fractions 1, 2/3, 3/4, 3/5, 4/7, 4/9, 4/10).
	s, y := exampleB()
	wantT := []float64{0.9, 0.8, 0.7, 0.6, 0.5, 0.3, 0.2, 0.1}
	wantP := []float64{1, 2. / 3, 0.75, 0.6, 4. / 7, 0.5, 4. / 9, 0.4}
	wantR := []float64{0.25, 0.5, 0.75, 0.75, 1, 1, 1, 1}
	got, err := PRCurve(s, y)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(wantT) {
		t.Fatalf("%d points, want %d", len(got), len(wantT))
	}
	for i := range wantT {
		if got[i].Threshold != wantT[i] {
			t.Errorf("point %d threshold %v, want %v", i, got[i].Threshold, wantT[i])
		}
		near(t, "precision", got[i].Precision, wantP[i], 1e-12)
		near(t, "recall", got[i].Recall, wantR[i], 1e-12)
	}
}

func TestListsReference(t *testing.T) {
	// Check 4 table (sklearn precision_score / recall_score on example B);
	// tolerance 1e-12. Top-K cases avoid cutting a tie, so keys do not matter.
	s, y := exampleB()
	keys := []uint64{5, 3, 8, 1, 9, 2, 7, 4, 6, 0}
	r, err := NewRanking(s, y, keys)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name      string
		list      func() (List, error)
		size, tp  int
		precision float64
		recall    float64
	}{
		{"score >= 0.8", func() (List, error) { return r.AtThreshold(0.8) }, 3, 2, 0.666666666667, 0.5},
		{"score >= 0.7", func() (List, error) { return r.AtThreshold(0.7) }, 4, 3, 0.75, 0.75},
		{"score >= 0.5", func() (List, error) { return r.AtThreshold(0.5) }, 7, 4, 0.571428571429, 1},
		{"top 1", func() (List, error) { return r.TopK(1) }, 1, 1, 1, 0.25},
		{"top 3", func() (List, error) { return r.TopK(3) }, 3, 2, 0.666666666667, 0.5},
		{"top 4", func() (List, error) { return r.TopK(4) }, 4, 3, 0.75, 0.75},
		{"top 5", func() (List, error) { return r.TopK(5) }, 5, 3, 0.6, 0.75},
		{"top 7", func() (List, error) { return r.TopK(7) }, 7, 4, 0.571428571429, 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			l, err := c.list()
			if err != nil {
				t.Fatal(err)
			}
			if l.Size != c.size || l.Positives != c.tp || l.Scored != 10 || l.AllPositives != 4 {
				t.Errorf("list = %+v, want size %d with %d positives of 4, 10 scored", l, c.size, c.tp)
			}
			near(t, "precision", l.Precision, c.precision, 1e-12)
			near(t, "recall", l.Recall, c.recall, 1e-12)
		})
	}
}

func TestBrierLogLossReference(t *testing.T) {
	bS, bY := exampleB()
	calP, calY := calibrationExample()
	cases := []struct {
		name           string
		p              []float64
		y              []bool
		brier, logLoss float64 // NaN: not given by the source
	}{
		// Check 6: sklearn brier_score_loss docstring.
		{"sklearn brier doc", []float64{0.1, 0.9, 0.8, 0.3}, labelsOf(0, 1, 1, 0), 0.0375, math.NaN()},
		// Check 6: sklearn log_loss docstring, as P(spam) with spam = 1.
		{"sklearn log loss doc", []float64{.9, .1, .2, .65}, labelsOf(1, 0, 0, 1), math.NaN(), 0.216161874680579},
		// Check 6: example B of check 4 read as probabilities.
		{"example B", bS, bY, 0.178, 0.528238102724968},
		// Check 6: the calibration example.
		{"calibration example", calP, calY, 0.13395, 0.409322918618838},
		// Check 6: clipping, sklearn 1.2.1 eps="auto" (float64 epsilon): -ln(eps)/2.
		{"p = 0 for a positive, clipped", []float64{0, 0}, labelsOf(1, 0), 0.5, 18.021826694558577},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !math.IsNaN(c.brier) {
				got, err := Brier(c.p, c.y)
				if err != nil {
					t.Fatal(err)
				}
				near(t, "Brier", got, c.brier, 1e-12) // check 6 tolerance
			}
			if !math.IsNaN(c.logLoss) {
				got, err := LogLoss(c.p, c.y)
				if err != nil {
					t.Fatal(err)
				}
				near(t, "LogLoss", got, c.logLoss, 1e-12) // check 6 tolerance
			}
		})
	}
}

func calibrationExample() ([]float64, []bool) {
	return []float64{0.05, 0.15, 0.25, 0.35, 0.45, 0.55, 0.62, 0.66, 0.71, 0.85, 0.93, 0.97},
		labelsOf(0, 0, 0, 1, 0, 1, 1, 0, 1, 1, 1, 1)
}

func TestCalibrationReference(t *testing.T) {
	// Check 6: sklearn calibration_curve; tolerance 1e-12.
	p, y := calibrationExample()
	cases := []struct {
		name               string
		table              func() ([]CalibrationBin, error)
		observed, meanPred []float64
		counts             []int
		lower              []float64
	}{
		{"uniform 5 bins", func() ([]CalibrationBin, error) { return CalibrationUniform(p, y, 5) },
			[]float64{0, 0.5, 0.5, 2. / 3, 1}, []float64{0.1, 0.3, 0.5, 0.663333333333333, 0.916666666666667},
			[]int{2, 2, 2, 3, 3}, []float64{0, 0.2, 0.4, 0.6, 0.8}},
		{"quantile 4 bins", func() ([]CalibrationBin, error) { return CalibrationQuantile(p, y, 4) },
			[]float64{0, 2. / 3, 2. / 3, 1}, []float64{0.15, 0.45, 0.663333333333333, 0.916666666666667},
			[]int{3, 3, 3, 3}, []float64{0.05, 0.325, 0.585, 0.745}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := c.table()
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(c.observed) {
				t.Fatalf("%d bins, want %d", len(got), len(c.observed))
			}
			for i, b := range got {
				near(t, "ObservedRate", b.ObservedRate, c.observed[i], 1e-12)
				near(t, "MeanPredicted", b.MeanPredicted, c.meanPred[i], 1e-12)
				near(t, "Lower", b.Lower, c.lower[i], 1e-12)
				if b.Count != c.counts[i] {
					t.Errorf("bin %d count %d, want %d", i, b.Count, c.counts[i])
				}
			}
		})
	}
}

func TestCalibrationEdges(t *testing.T) {
	// The rule of check 6: a value goes to the bin whose upper edge is the
	// first edge ≥ the value, so a value on an inner edge joins the lower
	// bin (sklearn calibration_curve, numpy searchsorted side "left").
	got, err := CalibrationUniform([]float64{0, 0.2, 0.4, 0.6, 1}, labelsOf(0, 1, 0, 1, 1), 5)
	if err != nil {
		t.Fatal(err)
	}
	wantUpper := []float64{0.2, 0.4, 0.6, 1}
	wantCount := []int{2, 1, 1, 1}
	if len(got) != len(wantCount) {
		t.Fatalf("%d bins, want %d: %+v", len(got), len(wantCount), got)
	}
	for i, b := range got {
		if b.Count != wantCount[i] || b.Upper != wantUpper[i] {
			t.Errorf("bin %d: %d up to %v; want %d up to %v", i, b.Count, b.Upper, wantCount[i], wantUpper[i])
		}
	}
}

func TestBootstrapStandardErrorReference(t *testing.T) {
	// Check 12: ideal bootstrap SE of the mean of x is √Σ(x−x̄)²/n =
	// 7.8051905806 (Efron & Tibshirani 1993, from memory in the reference;
	// it follows from resampling with replacement). With 20000 replicates
	// the replicate SD should be within 3% of it (the reference saw at most
	// 1.24% in 200 numpy repetitions). Rows of one customer move together:
	// duplicating each value as a second row of the same customer leaves the
	// ideal SE unchanged, while giving each row its own customer makes it
	// √2·√Σ(x−x̄)²/20 = 5.5191 (same formula with n = 20; derived here).
	// The two rows are v/2 and 3v/2, so a customer's rows average to v.
	x := []float64{3, 7, 7, 12, 14, 21, 28, 30, 45, 90}
	var dup, dupEqual []float64
	var sameCust, ownCust []int
	for i, v := range x {
		dup = append(dup, v/2, 3*v/2)
		dupEqual = append(dupEqual, v, v)
		sameCust = append(sameCust, 100+i, 100+i)
		ownCust = append(ownCust, 2*i, 2*i+1)
	}
	cases := []struct {
		name     string
		s        []float64
		clusters []int
		want     float64
	}{
		{"one row per customer", x, []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}, 7.8051905806},
		{"two rows per customer", dup, sameCust, 7.8051905806},
		{"two equal rows, each its own customer", dupEqual, ownCust, 7.8051905806 * math.Sqrt2 / 2},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var reps []float64
			mean := func(s []float64, _ []bool) (float64, error) {
				m := 0.0
				for _, v := range s {
					m += v
				}
				m /= float64(len(s))
				reps = append(reps, m)
				return m, nil
			}
			iv, err := Bootstrap(c.s, make([]bool, len(c.s)), c.clusters, mean, BootstrapOptions{Replicates: 20000, Seed1: 1, Seed2: 2})
			if err != nil {
				t.Fatal(err)
			}
			reps = reps[1:] // the first call is the estimate on the data as given
			if len(reps) != 20000 || iv.Replicates != 20000 {
				t.Fatalf("%d replicates recorded, interval says %d", len(reps), iv.Replicates)
			}
			m, ss := 0.0, 0.0
			for _, v := range reps {
				m += v
			}
			m /= float64(len(reps))
			for _, v := range reps {
				ss += (v - m) * (v - m)
			}
			sd := math.Sqrt(ss / float64(len(reps)))
			near(t, "replicate SD / ideal", sd/c.want, 1, 0.03)
			near(t, "estimate", iv.Estimate, 25.7, 1e-12)
			if !(iv.Lower < 25.7 && 25.7 < iv.Upper) || !slices.IsSorted([]float64{iv.Lower, iv.Upper}) {
				t.Errorf("interval [%v, %v] does not surround the mean 25.7", iv.Lower, iv.Upper)
			}
		})
	}
}
