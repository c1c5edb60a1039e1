package model

import (
	"math"
	"testing"

	"ebb/internal/bgnbd"
	"ebb/internal/frame"
)

// The BG/NBD model reads (x, t_x, T) from the snapshot columns: x =
// order_days_total − 1, T = tenure_days, t_x = T − recency_days. Its score
// must equal bgnbd.PNoPurchase on that summary, whose formulas are checked
// against the published ones in internal/bgnbd.
func TestBGNBDScoreReadsTheSummary(t *testing.T) {
	p := bgnbd.Params{R: 0.243, Alpha: 4.414 * 7, A: 0.793, B: 2.426} // CDNOW estimates (Fader, Hardie & Lee 2005, from memory), α in days
	m, err := NewBGNBD(p, 90, "2026-01-01")
	if err != nil {
		t.Fatal(err)
	}
	rows := []struct {
		name                  string
		total, tenure, recent float64
		want                  float64
	}{
		{"repeat buyer", 3, 100, 20, bgnbd.PNoPurchase(p, bgnbd.Customer{X: 2, Tx: 80, T: 100}, 90)},
		{"one order 40 days ago", 1, 40, 40, bgnbd.PNoPurchase(p, bgnbd.Customer{X: 0, Tx: 0, T: 40}, 90)},
		{"first order today", 1, 0, 0, math.Pow(p.Alpha/(p.Alpha+90), p.R)},
	}
	f, err := frame.New(BGNBDFeatures, len(rows))
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range rows {
		f.ColAt(0)[i], f.ColAt(1)[i], f.ColAt(2)[i] = r.total, r.tenure, r.recent
	}
	got, err := m.Score(f)
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range rows {
		if !near(got[i], r.want, 1e-12) || !(got[i] > 0 && got[i] < 1) {
			t.Errorf("%s: score %v, want %v", r.name, got[i], r.want)
		}
	}
	// A longer silence makes no order more likely for a repeat buyer.
	if !(got[0] < bgnbd.PNoPurchase(p, bgnbd.Customer{X: 2, Tx: 30, T: 100}, 90)) {
		t.Errorf("a 70-day silence should score above a 20-day one")
	}
	// Age 0 is the limit of small ages.
	if lim := bgnbd.PNoPurchase(p, bgnbd.Customer{X: 0, Tx: 0, T: 1e-9}, 90); !near(got[2], lim, 1e-9) {
		t.Errorf("age 0 score %v, limit %v", got[2], lim)
	}

	body, err := m.Save()
	if err != nil {
		t.Fatal(err)
	}
	back, err := Load(body)
	if err != nil {
		t.Fatal(err)
	}
	again, err := back.Score(f)
	if err != nil {
		t.Fatal(err)
	}
	for i := range got {
		if again[i] != got[i] {
			t.Errorf("row %d after Save/Load: %v, want %v", i, again[i], got[i])
		}
	}
	if _, err := NewBGNBD(bgnbd.Params{R: -1, Alpha: 1, A: 1, B: 1}, 90, ""); err == nil {
		t.Error("NewBGNBD accepted r = −1")
	}
	if _, err := NewBGNBD(p, 0, ""); err == nil {
		t.Error("NewBGNBD accepted a zero horizon")
	}
}
