package analysis

import (
	"math"
	"testing"
)

// A hand-worked ranking: scores .9, .8, .8, .3 with labels 1, 0, 1, 0; the
// tie at .8 is ordered by key (key 5 before key 7), so the list order is
// .9(1), .8 key 5 (1), .8 key 7 (0), .3(0).
func TestRankedLookups(t *testing.T) {
	data := encodeRanked([]float64{0.8, 0.9, 0.3, 0.8}, []bool{false, true, false, true}, []uint64{7, 1, 2, 5})
	r, err := DecodeRanked(data)
	if err != nil {
		t.Fatal(err)
	}
	if got := r.CumPos; len(got) != 5 || got[1] != 1 || got[2] != 2 || got[3] != 2 || got[4] != 2 {
		t.Fatalf("CumPos = %v, want [0 1 2 2 2]", got)
	}
	l := r.ListAt(2)
	if l.Size != 2 || l.Positives != 2 || l.Precision != 1 || l.Recall != 1 {
		t.Errorf("top 2 = %+v", l)
	}
	if k := r.Above(0.8); k != 3 {
		t.Errorf("Above(.8) = %d, want 3", k)
	}
	if k := r.Above(0.95); k != 0 {
		t.Errorf("Above(.95) = %d, want 0", k)
	}
	// Expected value with cost 1, value 10, save rate .5: a list of 25% (1
	// customer, a positive) is worth 1·.5·10 − 1 = 4; 50% (2, both
	// positive) 2·5 − 2 = 8; 75% (3, 2 positive) 10 − 3 = 7; 100% 10 − 4 = 6.
	pts, best := ExpectedValue([]Ranked{r}, Value{CostPerContact: 1, KeptValue: 10, SaveRate: 0.5})
	if len(pts) != 100 || math.Abs(pts[24].Value-4) > 1e-12 || math.Abs(pts[49].Value-8) > 1e-12 || math.Abs(pts[74].Value-7) > 1e-12 || math.Abs(pts[99].Value-6) > 1e-12 {
		t.Errorf("values at 25/50/75/100%% = %v %v %v %v", pts[24].Value, pts[49].Value, pts[74].Value, pts[99].Value)
	}
	if best.Value != 8 || best.Share != 0.26 {
		// 26% of 4 customers rounds up to 2, the first share reaching 8.
		t.Errorf("best = %+v, want 8 at 26%%", best)
	}
	if err := (Value{SaveRate: 2}).Check(); err == nil {
		t.Error("a save rate of 2 was accepted")
	}
}
