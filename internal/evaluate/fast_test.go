package evaluate

import (
	"math"
	"math/rand/v2"
	"testing"
)

// BootstrapAll and PairedAUC must give Bootstrap's and PairedBootstrap's
// intervals: the same draws, evaluated by weights instead of copies.
func TestFastBootstrapMatchesResampling(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	n := 3000
	probs, other := make([]float64, n), make([]float64, n)
	labels := make([]bool, n)
	clusters := make([]int, n)
	for i := range probs {
		clusters[i] = rng.IntN(900)
		labels[i] = rng.Float64() < 0.4
		// Scores rounded to two decimals, so ties are common.
		p := math.Round((0.3+0.3*b2f(labels[i])+0.4*rng.Float64())*100) / 100
		probs[i], other[i] = min(p, 1), math.Round(rng.Float64()*100)/100
	}
	opt := BootstrapOptions{Replicates: 120, Seed1: 7, Seed2: 9}
	fast, err := BootstrapAll(probs, labels, clusters, opt)
	if err != nil {
		t.Fatal(err)
	}
	for _, tt := range []struct {
		name   string
		metric Metric
		got    Interval
	}{{"auc", ROCAUC, fast.ROCAUC}, {"ap", AveragePrecision, fast.AveragePrecision}, {"brier", Brier, fast.Brier}, {"logloss", LogLoss, fast.LogLoss}} {
		want, err := Bootstrap(probs, labels, clusters, tt.metric, opt)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(want.Estimate-tt.got.Estimate) > 1e-12 || math.Abs(want.Lower-tt.got.Lower) > 1e-9 || math.Abs(want.Upper-tt.got.Upper) > 1e-9 {
			t.Errorf("%s: fast %+v, resampled %+v", tt.name, tt.got, want)
		}
	}
	want, err := PairedBootstrap(probs, other, labels, clusters, ROCAUC, opt)
	if err != nil {
		t.Fatal(err)
	}
	got, err := PairedAUC(probs, other, labels, clusters, opt)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(want.Lower-got.Lower) > 1e-9 || math.Abs(want.Upper-got.Upper) > 1e-9 || math.Abs(want.Estimate-got.Estimate) > 1e-12 {
		t.Errorf("paired: fast %+v, resampled %+v", got, want)
	}
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

func BenchmarkBootstrapAll200k(b *testing.B) {
	rng := rand.New(rand.NewPCG(3, 4))
	n := 200_000
	probs, labels, clusters := make([]float64, n), make([]bool, n), make([]int, n)
	for i := range probs {
		labels[i] = rng.Float64() < 0.45
		probs[i] = math.Round(rng.Float64()*1000) / 1000
		clusters[i] = rng.IntN(60_000)
	}
	b.ResetTimer()
	for range b.N {
		if _, err := BootstrapAll(probs, labels, clusters, BootstrapOptions{Seed1: 1}); err != nil {
			b.Fatal(err)
		}
	}
}
