package evaluate

import (
	"math"
	"testing"
)

func TestBootstrapDeterministic(t *testing.T) {
	s, y := breastCancer(t, "mean_radius")
	clusters := make([]int, len(s))
	for i := range clusters {
		clusters[i] = i / 2 // two rows per customer
	}
	run := func(seed uint64) Interval {
		t.Helper()
		iv, err := Bootstrap(s, y, clusters, ROCAUC, BootstrapOptions{Seed1: seed, Seed2: 7})
		if err != nil {
			t.Fatal(err)
		}
		return iv
	}
	a, b, c := run(1), run(1), run(2)
	if a != b {
		t.Errorf("same seed gave %+v and %+v", a, b)
	}
	if a.Lower == c.Lower && a.Upper == c.Upper {
		t.Errorf("different seeds gave the same interval %+v", a)
	}
	if a.Replicates+a.Skipped != DefaultReplicates {
		t.Errorf("%d + %d replicates, want %d", a.Replicates, a.Skipped, DefaultReplicates)
	}
	// Check 3c: the estimate is the AUC of the data as given (tolerance 1e-9).
	near(t, "Estimate", a.Estimate, 0.937516516040, 1e-9)
	if !(a.Lower < a.Estimate && a.Estimate < a.Upper && a.Upper <= 1) {
		t.Errorf("interval [%v, %v] does not surround %v", a.Lower, a.Upper, a.Estimate)
	}
}

func TestBootstrapAUCAgainstHanleyMcNeil(t *testing.T) {
	// The bootstrap SD of AUC should be near the Hanley & McNeil (1982)
	// standard error, 0.0324865796 for their Table 1 (reference check 3a).
	// Their formula is an approximation (exponential model), so only 15%
	// agreement is asked for; 4000 replicates keep the Monte Carlo error
	// near 1%.
	s, y := hanleyMcNeil()
	clusters := make([]int, len(s))
	for i := range clusters {
		clusters[i] = i
	}
	var reps []float64
	auc := func(s []float64, y []bool) (float64, error) {
		a, err := ROCAUC(s, y)
		reps = append(reps, a)
		return a, err
	}
	if _, err := Bootstrap(s, y, clusters, auc, BootstrapOptions{Replicates: 4000, Seed1: 3, Seed2: 4}); err != nil {
		t.Fatal(err)
	}
	reps = reps[1:]
	m, ss := 0.0, 0.0
	for _, v := range reps {
		m += v
	}
	m /= float64(len(reps))
	for _, v := range reps {
		ss += (v - m) * (v - m)
	}
	near(t, "bootstrap SD / Hanley–McNeil SE", math.Sqrt(ss/float64(len(reps)-1))/0.0324865796, 1, 0.15)
}

func TestPairedBootstrap(t *testing.T) {
	s, y := breastCancer(t, "mean_radius")
	other, _ := breastCancer(t, "mean_texture")
	clusters := make([]int, len(s))
	for i := range clusters {
		clusters[i] = i
	}
	shifted := make([]float64, len(s))
	for i, v := range s {
		shifted[i] = 2*v + 5 // same ranking
	}
	mean := func(s []float64, _ []bool) (float64, error) {
		m := 0.0
		for _, v := range s {
			m += v
		}
		return m / float64(len(s)), nil
	}
	opt := BootstrapOptions{Seed1: 11, Seed2: 12}
	cases := []struct {
		name         string
		a, b         []float64
		metric       Metric
		lower, upper float64 // NaN: only ordering is checked
	}{
		// A monotone rescaling ranks identically on every resample: the
		// AUC difference is exactly 0 in each replicate.
		{"same ranking, AUC", s, shifted, ROCAUC, 0, 0},
		// mean(s) − mean(s + 1) is −1 on every resample when rows are paired.
		{"constant shift, mean", s, addConst(s, 1), mean, -1, -1},
		// Check 3c: AUC 0.9375 (mean_radius) vs 0.7758 (mean_texture).
		{"radius vs texture, AUC", s, other, ROCAUC, math.NaN(), math.NaN()},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			iv, err := PairedBootstrap(c.a, c.b, y, clusters, c.metric, opt)
			if err != nil {
				t.Fatal(err)
			}
			if math.IsNaN(c.lower) {
				near(t, "Estimate", iv.Estimate, 0.937516516040-0.775824480736, 1e-9)
				if !(0 < iv.Lower && iv.Lower < iv.Estimate && iv.Estimate < iv.Upper) {
					t.Errorf("interval [%v, %v] should lie above 0 around %v", iv.Lower, iv.Upper, iv.Estimate)
				}
				return
			}
			near(t, "Lower", iv.Lower, c.lower, 1e-9)
			near(t, "Upper", iv.Upper, c.upper, 1e-9)
		})
	}
}

func addConst(s []float64, c float64) []float64 {
	out := make([]float64, len(s))
	for i, v := range s {
		out[i] = v + c
	}
	return out
}

func TestBootstrapSkipsOneClassResamples(t *testing.T) {
	cases := []struct {
		name    string
		labels  []bool
		refused bool
	}{
		// 2 of 4 customers positive: a resample has one class with
		// probability 2·(1/2)⁴ = 1/8, above the 1/10 allowed.
		{"tiny sample refused", labelsOf(1, 0, 1, 0), true},
		// 6 of 12: probability 2·(1/2)¹² ≈ 0.0005, so nearly all replicates count.
		{"small sample kept", labelsOf(1, 0, 1, 0, 1, 0, 1, 0, 1, 0, 1, 0), false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := make([]float64, len(c.labels))
			cl := make([]int, len(c.labels))
			for i := range s {
				s[i], cl[i] = float64(i%5), i
			}
			iv, err := Bootstrap(s, c.labels, cl, ROCAUC, BootstrapOptions{Replicates: 1000, Seed1: 5})
			if c.refused {
				wantInvalid(t, err)
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if iv.Replicates+iv.Skipped != 1000 || iv.Skipped > 100 {
				t.Errorf("%d kept, %d skipped of 1000", iv.Replicates, iv.Skipped)
			}
		})
	}
}
