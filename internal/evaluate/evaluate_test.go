package evaluate

import (
	"math"
	"math/rand/v2"
	"testing"
)

// pairAUC is the definition by brute force: over all (label 1, label 0)
// pairs, 1 when the label-1 score is higher, ½ when tied.
func pairAUC(s []float64, y []bool) float64 {
	var u, pairs float64
	for i := range s {
		for j := range s {
			if !y[i] || y[j] {
				continue
			}
			pairs++
			switch {
			case s[i] > s[j]:
				u++
			case s[i] == s[j]:
				u += 0.5
			}
		}
	}
	return u / pairs
}

func TestROCAUCMatchesPairCount(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	cases := []struct {
		name   string
		n      int
		levels int // distinct score values; few levels make many ties
	}{
		{"many ties", 300, 5},
		{"some ties", 500, 60},
		{"no ties likely", 400, 1 << 30},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := make([]float64, c.n)
			y := make([]bool, c.n)
			for i := range s {
				s[i] = float64(rng.IntN(c.levels))
				y[i] = rng.Float64() < 0.3+0.4*s[i]/float64(c.levels)
			}
			got, err := ROCAUC(s, y)
			if err != nil {
				t.Fatal(err)
			}
			near(t, "ROCAUC", got, pairAUC(s, y), 1e-12)
		})
	}
}

func TestGuardRails(t *testing.T) {
	nan := math.NaN()
	one := labelsOf(1, 1, 1)
	mixed := labelsOf(1, 0, 1)
	cases := []struct {
		name string
		call func() error
	}{
		{"AUC empty", func() error { _, err := ROCAUC(nil, nil); return err }},
		{"AUC only label 1", func() error { _, err := ROCAUC([]float64{1, 2, 3}, one); return err }},
		{"AUC only label 0", func() error { _, err := ROCAUC([]float64{1, 2, 3}, make([]bool, 3)); return err }},
		{"AUC NaN score", func() error { _, err := ROCAUC([]float64{1, nan, 3}, mixed); return err }},
		{"AUC length mismatch", func() error { _, err := ROCAUC([]float64{1, 2}, mixed); return err }},
		{"ROC curve one class", func() error { _, err := ROCCurve([]float64{1, 2, 3}, one); return err }},
		{"AP one class", func() error { _, err := AveragePrecision([]float64{1, 2, 3}, make([]bool, 3)); return err }},
		{"PR curve NaN", func() error { _, err := PRCurve([]float64{nan, 2, 3}, mixed); return err }},
		{"Brier empty", func() error { _, err := Brier(nil, nil); return err }},
		{"Brier NaN", func() error { _, err := Brier([]float64{0.1, nan, 0.3}, mixed); return err }},
		{"log loss above 1", func() error { _, err := LogLoss([]float64{0.1, 1.2, 0.3}, mixed); return err }},
		{"log loss negative", func() error { _, err := LogLoss([]float64{-0.1, 0.2, 0.3}, mixed); return err }},
		{"calibration zero bins", func() error { _, err := CalibrationUniform([]float64{0.1, 0.2, 0.3}, mixed, 0); return err }},
		{"calibration NaN", func() error { _, err := CalibrationQuantile([]float64{0.1, nan, 0.3}, mixed, 2); return err }},
		{"ranking no label 1", func() error { _, err := NewRanking([]float64{1, 2, 3}, make([]bool, 3), []uint64{1, 2, 3}); return err }},
		{"ranking missing keys", func() error { _, err := NewRanking([]float64{1, 2, 3}, mixed, []uint64{1}); return err }},
		{"ranking NaN", func() error { _, err := NewRanking([]float64{1, nan, 3}, mixed, []uint64{1, 2, 3}); return err }},
		{"ranking empty", func() error { _, err := NewRanking(nil, nil, nil); return err }},
		{"average of no dates", func() error { _, err := AverageLists(nil); return err }},
		{"Hanley McNeil one class", func() error { _, err := HanleyMcNeilSE(0.8, 0, 10); return err }},
		{"Hanley McNeil NaN AUC", func() error { _, err := HanleyMcNeilSE(nan, 5, 10); return err }},
		{"bootstrap cluster count", func() error {
			_, err := Bootstrap([]float64{1, 2, 3}, mixed, []int{1, 2}, ROCAUC, BootstrapOptions{})
			return err
		}},
		{"bootstrap one class", func() error {
			_, err := Bootstrap([]float64{1, 2, 3}, one, []int{1, 2, 3}, ROCAUC, BootstrapOptions{})
			return err
		}},
		{"bootstrap level 1", func() error {
			_, err := Bootstrap([]float64{1, 2, 3}, mixed, []int{1, 2, 3}, ROCAUC, BootstrapOptions{Level: 1})
			return err
		}},
		{"bootstrap negative replicates", func() error {
			_, err := Bootstrap([]float64{1, 2, 3}, mixed, []int{1, 2, 3}, ROCAUC, BootstrapOptions{Replicates: -5})
			return err
		}},
		{"paired bootstrap lengths", func() error {
			_, err := PairedBootstrap([]float64{1, 2, 3}, []float64{1, 2}, mixed, []int{1, 2, 3}, ROCAUC, BootstrapOptions{})
			return err
		}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) { wantInvalid(t, c.call()) })
	}
}

func TestListArgumentErrors(t *testing.T) {
	s, y := exampleB()
	r, err := NewRanking(s, y, []uint64{0, 1, 2, 3, 4, 5, 6, 7, 8, 9})
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		call func() error
	}{
		{"top 0", func() error { _, err := r.TopK(0); return err }},
		{"top 0%", func() error { _, err := r.TopPercent(0); return err }},
		{"top 101%", func() error { _, err := r.TopPercent(101); return err }},
		{"top NaN%", func() error { _, err := r.TopPercent(math.NaN()); return err }},
		{"threshold NaN", func() error { _, err := r.AtThreshold(math.NaN()); return err }},
		{"gains 0 groups", func() error { _, err := r.Gains(0); return err }},
		{"gains more groups than customers", func() error { _, err := r.Gains(11); return err }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) { wantInvalid(t, c.call()) })
	}
}

// Example B has ties at 0.8 (rows 1: label 0, 2: label 1) and 0.5 (rows 5:
// label 0, 6: label 1). Cutting inside a tie follows the tie-break key,
// smaller first, whatever the input order. Expected counts by hand.
func TestTopKTieBreakKey(t *testing.T) {
	s, y := exampleB()
	byIndex := []uint64{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}  // label-0 row of each tie first
	reversed := []uint64{9, 8, 7, 6, 5, 4, 3, 2, 1, 0} // label-1 row of each tie first
	cases := []struct {
		name string
		keys []uint64
		k    int
		tp   int
	}{
		{"top 2, label 0 first", byIndex, 2, 1},
		{"top 2, label 1 first", reversed, 2, 2},
		{"top 6, label 0 first", byIndex, 6, 3},
		{"top 6, label 1 first", reversed, 6, 4},
		{"top 20 is everyone", byIndex, 20, 4},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			perm := rand.New(rand.NewPCG(uint64(c.k), 9)).Perm(len(s))
			for _, order := range [][]int{{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}, perm} {
				ps, py, pk := make([]float64, len(s)), make([]bool, len(s)), make([]uint64, len(s))
				for i, j := range order {
					ps[i], py[i], pk[i] = s[j], y[j], c.keys[j]
				}
				r, err := NewRanking(ps, py, pk)
				if err != nil {
					t.Fatal(err)
				}
				l, err := r.TopK(c.k)
				if err != nil {
					t.Fatal(err)
				}
				if l.Positives != c.tp || l.Size != min(c.k, 10) {
					t.Errorf("order %v: top %d has %d positives of %d, want %d", order, c.k, l.Positives, l.Size, c.tp)
				}
			}
		})
	}
}

func TestTopKSharedKeyRefused(t *testing.T) {
	// Two customers with the same score and the same key but different
	// labels: a cut between them would depend on input order.
	r, err := NewRanking([]float64{0.9, 0.5, 0.5, 0.1}, labelsOf(1, 1, 0, 0), []uint64{1, 7, 7, 2})
	if err != nil {
		t.Fatal(err)
	}
	_, err = r.TopK(2)
	wantInvalid(t, err)
	// Cutting outside the shared pair is fine.
	if l, err := r.TopK(3); err != nil || l.Positives != 2 {
		t.Errorf("TopK(3) = %+v, %v; want 2 positives", l, err)
	}
}

func TestTopPercent(t *testing.T) {
	s, y := exampleB()
	r, err := NewRanking(s, y, []uint64{0, 1, 2, 3, 4, 5, 6, 7, 8, 9})
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		pct  float64
		size int
	}{
		{"10% of 10", 10, 1},
		{"25% rounds up", 25, 3},
		{"11% rounds up", 11, 2},
		{"30% exactly", 30, 3},
		{"tiny share is one customer", 0.01, 1},
		{"everyone", 100, 10},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			l, err := r.TopPercent(c.pct)
			if err != nil {
				t.Fatal(err)
			}
			if l.Size != c.size {
				t.Errorf("size %d, want %d", l.Size, c.size)
			}
		})
	}
}

func TestAtThresholdEdges(t *testing.T) {
	s, y := exampleB()
	r, err := NewRanking(s, y, make([]uint64, 10))
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name      string
		t         float64
		size, tp  int
		precision float64
	}{
		{"above every score: empty list", 0.95, 0, 0, 0},
		{"exactly the top score", 0.9, 1, 1, 1},
		{"between scores", 0.65, 4, 3, 0.75},
		{"minus infinity: everyone", math.Inf(-1), 10, 4, 0.4},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			l, err := r.AtThreshold(c.t)
			if err != nil {
				t.Fatal(err)
			}
			if l.Size != c.size || l.Positives != c.tp || l.Precision != c.precision {
				t.Errorf("list %+v, want size %d, %d positives, precision %v", l, c.size, c.tp, c.precision)
			}
		})
	}
}

func TestAverageLists(t *testing.T) {
	// By hand: precisions 3/4 and 2/3, recalls 3/4 and 2/4.
	got, err := AverageLists([]List{
		{Size: 4, Positives: 3, Scored: 10, AllPositives: 4, Precision: 0.75, Recall: 0.75},
		{Size: 3, Positives: 2, Scored: 12, AllPositives: 4, Precision: 2. / 3, Recall: 0.5},
	})
	if err != nil {
		t.Fatal(err)
	}
	near(t, "MeanPrecision", got.MeanPrecision, (0.75+2./3)/2, 1e-15)
	near(t, "MeanRecall", got.MeanRecall, 0.625, 1e-15)
	near(t, "MeanSize", got.MeanSize, 3.5, 1e-15)
	if got.Dates != 2 || got.Size != 7 || got.Positives != 5 || got.AllPositives != 8 {
		t.Errorf("totals %+v, want 2 dates, size 7, 5 positives of 8", got)
	}
}

func TestGains(t *testing.T) {
	// Example B in 5 groups of 2; expected by hand from the list order.
	s, y := exampleB()
	cases := []struct {
		name      string
		keys      []uint64
		positives []int
		lift      []float64
		gain      []float64
		cumLift   []float64
	}{
		{"label 0 first in ties", []uint64{0, 1, 2, 3, 4, 5, 6, 7, 8, 9},
			[]int{1, 2, 0, 1, 0}, []float64{1.25, 2.5, 0, 1.25, 0},
			[]float64{0.25, 0.75, 0.75, 1, 1}, []float64{1.25, 1.875, 1.25, 1.25, 1}},
		{"label 1 first in ties", []uint64{9, 8, 7, 6, 5, 4, 3, 2, 1, 0},
			[]int{2, 1, 1, 0, 0}, []float64{2.5, 1.25, 1.25, 0, 0},
			[]float64{0.5, 0.75, 1, 1, 1}, []float64{2.5, 1.875, 5. / 3, 1.25, 1}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r, err := NewRanking(s, y, c.keys)
			if err != nil {
				t.Fatal(err)
			}
			rows, err := r.Gains(5)
			if err != nil {
				t.Fatal(err)
			}
			for i, g := range rows {
				if g.Group != i+1 || g.Count != 2 || g.Positives != c.positives[i] || g.CumCount != 2*(i+1) {
					t.Errorf("row %d = %+v, want group %d of 2 with %d positives", i, g, i+1, c.positives[i])
				}
				near(t, "Lift", g.Lift, c.lift[i], 1e-12)
				near(t, "Gain", g.Gain, c.gain[i], 1e-12)
				near(t, "CumLift", g.CumLift, c.cumLift[i], 1e-12)
			}
		})
	}
}

func TestGainsUnevenGroups(t *testing.T) {
	// 7 customers in 3 groups: positions ⌊g·7/3⌋ give sizes 2, 2, 3.
	r, err := NewRanking([]float64{7, 6, 5, 4, 3, 2, 1}, labelsOf(1, 1, 0, 1, 0, 0, 0), []uint64{0, 0, 0, 0, 0, 0, 0})
	if err != nil {
		t.Fatal(err)
	}
	rows, err := r.Gains(3)
	if err != nil {
		t.Fatal(err)
	}
	wantCount := []int{2, 2, 3}
	wantPos := []int{2, 1, 0}
	for i, g := range rows {
		if g.Count != wantCount[i] || g.Positives != wantPos[i] {
			t.Errorf("group %d: %d customers, %d positives; want %d, %d", i+1, g.Count, g.Positives, wantCount[i], wantPos[i])
		}
	}
}

func TestSentences(t *testing.T) {
	cases := []struct {
		name string
		got  string
		want string
	}{
		// The two sentences of DESIGN.md §1 "Evaluation, in plain language".
		{"precision, design example", PrecisionSentence(412, 287, 90), "Of the 412 customers on this list, 287 (70%) did not order again within 90 days."},
		{"recall, design example", RecallSentence(350, 287), "Of the 350 customers who did not order again, 287 (82%) were on the list."},
		{"singular", PrecisionSentence(1, 1, 1), "Of the 1 customer on this list, 1 (100%) did not order again within 1 day."},
		{"thousands and never 100% for less", PrecisionSentence(12000, 11999, 60), "Of the 12,000 customers on this list, 11,999 (over 99%) did not order again within 60 days."},
		{"never 0% for some", PrecisionSentence(400, 1, 90), "Of the 400 customers on this list, 1 (under 1%) did not order again within 90 days."},
		{"none", PrecisionSentence(5, 0, 90), "Of the 5 customers on this list, 0 (0%) did not order again within 90 days."},
		{"empty list", PrecisionSentence(0, 0, 90), "This list is empty."},
		{"recall singular verb", RecallSentence(1, 1), "Of the 1 customer who did not order again, 1 (100%) was on the list."},
		{"recall with nobody to find", RecallSentence(0, 0), "No scored customer failed to order again, so there was no one for the list to find."},
		{"recall million", RecallSentence(1234567, 617284), "Of the 1,234,567 customers who did not order again, 617,284 (50%) were on the list."},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if c.got != c.want {
				t.Errorf("got  %q\nwant %q", c.got, c.want)
			}
		})
	}
}
