package model

import (
	"math"
	"math/rand/v2"
	"testing"

	"ebb/internal/bgnbd"
	"ebb/internal/frame"
)

// Logistic contributions are coefficient × standardized value, so the
// intercept plus their sum is the raw score's log-odds, and a missing
// indicator's share lands on its own feature.
func TestLogisticContributionsAddUp(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	n := 400
	names := []string{"recency_days", "mean_gap_days"}
	f, _ := frame.New(names, n)
	for i := range n {
		r := rng.Float64() * 100
		f.ColAt(0)[i] = r
		f.ColAt(1)[i] = 20 + rng.Float64()*40
		if i%7 == 0 {
			f.ColAt(1)[i] = math.NaN()
		}
		if r/100+0.3*rng.NormFloat64() > 0.5 {
			f.Labels()[i] = 1
		}
	}
	m, err := TrainLogistic(f, names, LogisticOptions{C: 1})
	if err != nil {
		t.Fatal(err)
	}
	raw, err := m.Score(f)
	if err != nil {
		t.Fatal(err)
	}
	bias, contrib, err := m.Contributions(f)
	if err != nil {
		t.Fatal(err)
	}
	for i := range n {
		sum := bias + contrib[2*i] + contrib[2*i+1]
		if want := logOdds(raw[i]); math.Abs(sum-want) > 1e-9 {
			t.Fatalf("row %d: bias + contributions = %v, log-odds %v", i, sum, want)
		}
	}
	// Recency raises the risk here, so the quietest customer's recency
	// contribution is positive and the most recent one's negative.
	hi, lo := 0, 0
	for i := range n {
		if f.ColAt(0)[i] > f.ColAt(0)[hi] {
			hi = i
		}
		if f.ColAt(0)[i] < f.ColAt(0)[lo] {
			lo = i
		}
	}
	if !(contrib[2*hi] > 0 && contrib[2*lo] < 0) {
		t.Errorf("recency contributions: quietest %v, most recent %v", contrib[2*hi], contrib[2*lo])
	}
}

// Occlusion for the baseline and BG/NBD: setting recency to the median
// moves a long-silent customer's score down, so their recency contribution
// is positive; a recent one's is negative.
func TestOcclusionContributions(t *testing.T) {
	base, _ := TrainBaseline("recency_days", 90)
	bg, _ := NewBGNBD(bgnbd.Params{R: 0.8, Alpha: 60, A: 0.9, B: 3}, 90, "")
	// order_days_total, tenure_days, recency_days: three repeat buyers.
	rows := [][3]float64{{5, 400, 10}, {5, 400, 60}, {5, 400, 200}}
	f, _ := frame.New(BGNBDFeatures, len(rows))
	for i, r := range rows {
		f.ColAt(0)[i], f.ColAt(1)[i], f.ColAt(2)[i] = r[0], r[1], r[2]
	}
	for _, tt := range []struct {
		name string
		m    *Model
		rec  int // index of recency_days in the model's features
	}{{"baseline", base, 0}, {"bgnbd", bg, 2}} {
		t.Run(tt.name, func(t *testing.T) {
			_, contrib, err := tt.m.Contributions(f)
			if err != nil {
				t.Fatal(err)
			}
			p := len(tt.m.Features)
			if got := contrib[0*p+tt.rec]; !(got < 0) {
				t.Errorf("10 silent days: recency contribution %v, want < 0", got)
			}
			if got := contrib[1*p+tt.rec]; got != 0 {
				t.Errorf("the median customer: recency contribution %v, want 0", got)
			}
			if got := contrib[2*p+tt.rec]; !(got > 0) {
				t.Errorf("200 silent days: recency contribution %v, want > 0", got)
			}
		})
	}
}
