package evaluate

import (
	"math/rand/v2"
	"testing"
)

// benchScores returns n scores rounded to 3 decimals (so ties occur, as
// with calibrated probabilities) with labels drawn from them.
func benchScores(n int) ([]float64, []bool, []uint64) {
	rng := rand.New(rand.NewPCG(8, 9))
	s := make([]float64, n)
	y := make([]bool, n)
	k := make([]uint64, n)
	for i := range s {
		s[i] = float64(int(rng.Float64()*1000)) / 1000
		y[i] = rng.Float64() < s[i]*0.6
		k[i] = rng.Uint64()
	}
	return s, y, k
}

// BenchmarkMetrics1M: each whole-sample metric on one million scored
// customers.
func BenchmarkMetrics1M(b *testing.B) {
	s, y, k := benchScores(1_000_000)
	b.Run("ROCAUC", func(b *testing.B) {
		for range b.N {
			if _, err := ROCAUC(s, y); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("AveragePrecision", func(b *testing.B) {
		for range b.N {
			if _, err := AveragePrecision(s, y); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("LogLoss", func(b *testing.B) {
		for range b.N {
			if _, err := LogLoss(s, y); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("CalibrationQuantile10", func(b *testing.B) {
		for range b.N {
			if _, err := CalibrationQuantile(s, y, 10); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("NewRanking+lists+deciles", func(b *testing.B) {
		for range b.N {
			r, err := NewRanking(s, y, k)
			if err != nil {
				b.Fatal(err)
			}
			if _, err := r.TopPercent(10); err != nil {
				b.Fatal(err)
			}
			if _, err := r.Gains(10); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkBootstrapAUC: a 95% interval of ROC AUC with the default 200
// replicates on 50k rows of 25k customers, and the paired version.
func BenchmarkBootstrapAUC(b *testing.B) {
	s, y, _ := benchScores(50_000)
	s2, _, _ := benchScores(50_000)
	cl := make([]int, len(s))
	for i := range cl {
		cl[i] = i / 2
	}
	b.Run("single", func(b *testing.B) {
		for range b.N {
			if _, err := Bootstrap(s, y, cl, ROCAUC, BootstrapOptions{Seed1: 1}); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("paired", func(b *testing.B) {
		for range b.N {
			if _, err := PairedBootstrap(s, s2, y, cl, ROCAUC, BootstrapOptions{Seed1: 1}); err != nil {
				b.Fatal(err)
			}
		}
	})
}
