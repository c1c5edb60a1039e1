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

// BootstrapMany evaluates several models with one set of draws: each
// model's intervals are Bootstrap's and each difference PairedBootstrap's.
func TestBootstrapManyMatchesResampling(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	n := 2000
	labels := make([]bool, n)
	clusters := make([]int, n)
	probs := [][]float64{make([]float64, n), make([]float64, n), make([]float64, n)}
	for i := range labels {
		clusters[i] = rng.IntN(700)
		labels[i] = rng.Float64() < 0.35
		for m := range probs {
			probs[m][i] = math.Round((0.2*float64(m)*b2f(labels[i])+0.6*rng.Float64())*100) / 100
		}
	}
	opt := BootstrapOptions{Replicates: 80, Seed1: 3, Seed2: 4}
	ivs, vs, err := BootstrapMany(probs, labels, clusters, 0, opt)
	if err != nil {
		t.Fatal(err)
	}
	for m := range probs {
		for _, c := range []struct {
			name   string
			metric Metric
			got    Interval
		}{{"auc", ROCAUC, ivs[m].ROCAUC}, {"ap", AveragePrecision, ivs[m].AveragePrecision}, {"brier", Brier, ivs[m].Brier}, {"logloss", LogLoss, ivs[m].LogLoss}} {
			want, err := Bootstrap(probs[m], labels, clusters, c.metric, opt)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(want.Lower-c.got.Lower) > 1e-9 || math.Abs(want.Upper-c.got.Upper) > 1e-9 || math.Abs(want.Estimate-c.got.Estimate) > 1e-12 {
				t.Errorf("model %d %s: many %+v, resampled %+v", m, c.name, c.got, want)
			}
		}
		if m == 0 {
			if vs[0] != (Interval{}) {
				t.Errorf("the reference's difference with itself = %+v, want zero", vs[0])
			}
			continue
		}
		want, err := PairedBootstrap(probs[m], probs[0], labels, clusters, ROCAUC, opt)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(want.Lower-vs[m].Lower) > 1e-9 || math.Abs(want.Upper-vs[m].Upper) > 1e-9 || math.Abs(want.Estimate-vs[m].Estimate) > 1e-12 {
			t.Errorf("model %d vs 0: many %+v, resampled %+v", m, vs[m], want)
		}
	}
	if _, _, err := BootstrapMany(probs, labels, clusters, 3, opt); err == nil {
		t.Error("BootstrapMany accepted a reference model that does not exist")
	}
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// BenchmarkBootstrapMany200k is the evaluation of four models on a 200k-row
// test sample with 200 replicates, paired against the first.
func BenchmarkBootstrapMany200k(b *testing.B) {
	rng := rand.New(rand.NewPCG(3, 4))
	n := 200_000
	labels, clusters := make([]bool, n), make([]int, n)
	probs := make([][]float64, 4)
	for m := range probs {
		probs[m] = make([]float64, n)
	}
	for i := range labels {
		labels[i] = rng.Float64() < 0.45
		clusters[i] = rng.IntN(60_000)
		for m := range probs {
			probs[m][i] = math.Round(rng.Float64()*1000) / 1000
		}
	}
	b.ResetTimer()
	for range b.N {
		if _, _, err := BootstrapMany(probs, labels, clusters, 0, BootstrapOptions{Seed1: 1}); err != nil {
			b.Fatal(err)
		}
	}
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
