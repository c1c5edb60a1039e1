package gaps

import (
	"math"
	"strings"
	"testing"

	"ebb/internal/civil"
	"ebb/internal/history"
)

// The hand-built history of these tests. Days are offsets from a base day
// (2024-01-01 = offset 0); data_through is offset 1000; the look-back is
// 100 days, so the days in it are 901 … 1000.
//
//	A ×10: 920, 940, 960              gaps in L 20, 20; mean 20; open 40
//	B ×10: 850, 910, 970, 970 (same day, merged)
//	                                  gaps in L 60 (850→910 starts before L);
//	                                  mean 60; open 30
//	C ×10: 990                        one order day in L; open 10
//	D ×5:  500, 600                   no order day in L (outside the look-back)
//	E ×10: 905, 915, 925, 995         gaps 10, 10, 70; mean (995−905)/3 = 30; open 5
var base = civil.FromYMD(2024, 1, 1)

func handBuilt(t *testing.T) *history.History {
	t.Helper()
	patterns := []struct {
		copies int
		days   []int
	}{
		{10, []int{920, 940, 960}},
		{10, []int{850, 910, 970, 970}},
		{10, []int{990}},
		{5, []int{500, 600}},
		{10, []int{905, 915, 925, 995}},
	}
	b := history.NewBuilder(45, 120)
	c := int32(0)
	for _, p := range patterns {
		for k := 0; k < p.copies; k++ {
			for _, d := range p.days {
				b.Add(c, base+civil.Date(d), 10, true)
			}
			c++
		}
	}
	h, err := b.Build(base + 1000)
	if err != nil {
		t.Fatal(err)
	}
	return h
}

func TestWindowsOnHandBuiltHistory(t *testing.T) {
	h := handBuilt(t)
	ws, err := Derive(h, Options{Percentile: 50, LookbackDays: 100, Bootstrap: 50, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	byMethod := map[Method]Window{}
	for _, w := range ws {
		byMethod[w.Method] = w
	}
	tests := []struct {
		method                                      Method
		days, used, episodes, single, outside, cens int
		value                                       float64
	}{
		// Means: 20 ×10, 30 ×10, 60 ×10. Definition 7 at p = .5: h = 29·.5 =
		// 14.5, between the 15th and 16th values, both 30.
		{MeanGap, 30, 30, 60, 10, 5, 0, 30},
		// Gaps: 10 ×20 (E), 20 ×20 (A), 60 ×10 (B), 70 ×10 (E); h = 59·.5 =
		// 29.5, between the 30th and 31st values, both 20.
		{PooledGap, 20, 30, 60, 10, 5, 0, 20},
		// Episodes (100): events 10 ×20, 20 ×20, 60 ×10, 70 ×10; censored
		// 5 ×10, 10 ×10, 30 ×10, 40 ×10. Kaplan–Meier, events before
		// censorings at a tie: S(10) = 70/90 = .7778, S(20) = .7778·40/60 =
		// .5185, S(60) = .5185·10/20 = .2593, S(70) = 0. F(τ) = 1, so X is
		// the first t with F(t) ≥ .5: F(20) = .4815, F(60) = .7407 → 60.
		{Censored, 60, 40, 100, 10, 5, 40, 60},
	}
	for _, tt := range tests {
		t.Run(string(tt.method), func(t *testing.T) {
			w := byMethod[tt.method]
			if !w.OK {
				t.Fatalf("not OK: %s", w.Reason)
			}
			if w.Days != tt.days || math.Abs(w.Value-tt.value) > 1e-9 || w.CustomersUsed != tt.used || w.Episodes != tt.episodes ||
				w.SingleOrderCustomers != tt.single || w.OutsideLookback != tt.outside || w.Censored != tt.cens {
				t.Errorf("%s = X %d (%.3f), used %d, episodes %d, single %d, outside %d, censored %d; want %d (%.3f), %d, %d, %d, %d, %d",
					tt.method, w.Days, w.Value, w.CustomersUsed, w.Episodes, w.SingleOrderCustomers, w.OutsideLookback, w.Censored,
					tt.days, tt.value, tt.used, tt.episodes, tt.single, tt.outside, tt.cens)
			}
			if w.Sentence == "" {
				t.Error("no sentence")
			}
		})
	}
	c := byMethod[Censored]
	if !c.HasBand || c.BandLow > c.Days || c.BandHigh < c.Days {
		t.Errorf("censored band = %d–%d (has %v), want it around %d", c.BandLow, c.BandHigh, c.HasBand, c.Days)
	}
}

func TestTooFewForThePercentile(t *testing.T) {
	h := handBuilt(t)
	ws, err := Derive(h, Options{Percentile: 90, LookbackDays: 100, Bootstrap: -0})
	if err != nil {
		t.Fatal(err)
	}
	// A 90th percentile needs 100 values (ten above it); there are 30 means
	// and 60 gaps.
	want := map[Method]string{
		MeanGap:   "only 30 customers with two order days in the look-back period; at least 100 are needed for a 90th percentile",
		PooledGap: "only 60 gaps between order days in the look-back period; at least 100 are needed for a 90th percentile",
		Censored:  "only 60 reorders in the look-back period; at least 100 are needed",
	}
	for _, w := range ws {
		if w.OK || w.Reason != want[w.Method] {
			t.Errorf("%s: OK %v, reason %q; want %q", w.Method, w.OK, w.Reason, want[w.Method])
		}
	}
	if _, err := Derive(h, Options{Percentile: 120}); err == nil || !strings.Contains(err.Error(), "percentile") {
		t.Errorf("percentile 120: err = %v", err)
	}
}

func TestSensitivityOnHandBuiltHistory(t *testing.T) {
	h := handBuilt(t)
	rows := Sensitivity(h, 100, 100)
	if len(rows) != MaxX || rows[0].Days != 1 || rows[MaxX-1].Days != MaxX {
		t.Fatalf("rows cover %d…%d", rows[0].Days, rows[len(rows)-1].Days)
	}
	// Lapsed today: active customers (an order day in L) are A, B, C, E
	// (40); recency at data_through A 40, B 30, C 10, E 5. C is the only
	// first-time group (one order day).
	// Lapse episodes with W = 100 count when d + X + 100 ≤ 1000, i.e. for
	// order days d ≤ 900 − X: B's 850 (gap 60, first order day), D's 500
	// (gap 100, first order day) and D's 600 (open, a repeat customer's).
	tests := []struct {
		x                        int
		g                        Group
		active, lapsed, eps, ret int
		median                   float64
	}{
		{10, All, 40, 30, 20, 15, 50},       // returns: B waits 60−10 = 50 ×10, D 100−10 = 90 ×5; 8th of 15 is 50
		{10, FirstTime, 10, 10, 15, 15, 50}, // C lapsed; B and D's first gaps
		{10, Repeat, 30, 20, 5, 0, 0},       // A, B lapsed; D's open gap never returns
		{31, All, 40, 10, 20, 15, 29},       // A only; waits 29 ×10, 69 ×5
		{41, All, 40, 0, 20, 15, 19},        // B's gap of 60 still counts (41 ≤ 50), returns after 19 (×10); D after 59 (×5); D's open gap
		{55, All, 40, 0, 10, 5, 45},         // B no longer counts (55 > 50); D 100−55 = 45
		{150, All, 40, 0, 5, 0, 0},          // D's gap of 100 is not a lapse at 150; the open one is
		{301, All, 40, 0, 0, 0, 0},          // 600 + 301 + 100 > 1000
	}
	for _, tt := range tests {
		c := rows[tt.x-1].Cells[tt.g]
		if c.Active != tt.active || c.Lapsed != tt.lapsed || c.Episodes != tt.eps || c.Returned != tt.ret || c.MedianExtraWait != tt.median {
			t.Errorf("X=%d %s: active %d lapsed %d episodes %d returned %d median %v; want %d %d %d %d %v",
				tt.x, tt.g, c.Active, c.Lapsed, c.Episodes, c.Returned, c.MedianExtraWait, tt.active, tt.lapsed, tt.eps, tt.ret, tt.median)
		}
	}
}

func TestSecondOrderWindow(t *testing.T) {
	h := handBuilt(t)
	ws, err := DeriveSecondOrder(h, Options{Percentile: 50, LookbackDays: 100, Bootstrap: -0})
	if err != nil {
		t.Fatal(err)
	}
	// First order days in L (901…1000): A 920 (second 940: gap 20), C 990
	// (no second: censored at 10), E 905 (second 915: gap 10); B's first is
	// 850, D's 500. So 20 first-to-second gaps (10 ×10, 20 ×10) and 10
	// censored; too few for the pooled percentile (30 needed), but the
	// censoring-aware method has 20 events: S(10) = 20/30 → F = 1/3 … with
	// n = 30 at risk: events 10 at t=10 (E) → S = 20/30; censored 10 at
	// t=10 (C) leave; events 10 at t=20 (A) → S = 0. F(τ) = 1; X = first t
	// with F ≥ .5 = 20. But 20 events < 30 needed: not OK either.
	if ws[0].OK || ws[0].CustomersUsed != 20 || ws[0].SingleOrderCustomers != 10 {
		t.Errorf("second-order pooled: OK %v used %d single %d; want false, 20, 10", ws[0].OK, ws[0].CustomersUsed, ws[0].SingleOrderCustomers)
	}
	if ws[1].OK || ws[1].Episodes != 30 || ws[1].Censored != 10 || ws[1].SingleOrderCustomers != 10 {
		t.Errorf("second-order censored: OK %v episodes %d censored %d single %d; want false, 30, 10, 10", ws[1].OK, ws[1].Episodes, ws[1].Censored, ws[1].SingleOrderCustomers)
	}
}

func TestChartFigures(t *testing.T) {
	h := handBuilt(t)
	f, err := Chart(h, Options{LookbackDays: 100})
	if err != nil {
		t.Fatal(err)
	}
	// Pooled gaps in L: 10 ×20, 20 ×20, 60 ×10, 70 ×10.
	want := map[int]int{10: 20, 20: 20, 60: 10, 70: 10}
	for d, k := range f.GapCounts {
		if k != want[d] {
			t.Errorf("GapCounts[%d] = %d, want %d", d, k, want[d])
		}
	}
	// The curve of TestWindowsOnHandBuiltHistory: F(10) = 2/9, F(20) =
	// 1 − .7778·2/3 = .4815, F(60) = .7407, F(70) = 1.
	wantF := []struct{ t, f float64 }{{10, 2.0 / 9}, {20, 1 - 7.0/9*2/3}, {60, 1 - 7.0/9*2/3/2}, {70, 1}}
	if len(f.Repurchase) != len(wantF) {
		t.Fatalf("curve has %d points, want %d", len(f.Repurchase), len(wantF))
	}
	for i, p := range f.Repurchase {
		if p.Days != wantF[i].t || math.Abs(p.Share-wantF[i].f) > 1e-12 || p.Lower > p.Share || p.Upper < p.Share {
			t.Errorf("point %d = %+v, want t %v F %.4f inside its band", i, p, wantF[i].t, wantF[i].f)
		}
	}
	if f.CapShare != 1 {
		t.Errorf("CapShare = %v, want 1", f.CapShare)
	}
}

func TestSensitivityByAttribute(t *testing.T) {
	h := handBuilt(t)
	// Customers 0–19 are A and B (level 0), 20–29 C and 35–44 E (level 1),
	// 30–34 D (no level).
	level := make([]int32, 45)
	for c := range level {
		switch {
		case c < 20:
			level[c] = 0
		case c >= 30 && c < 35:
			level[c] = -1
		default:
			level[c] = 1
		}
	}
	cells := SensitivityBy(h, 100, 100, level, 2)
	// X = 10: level 0 has A (recency 40) and B (30), both lapsed, and B's
	// ten lapses after 850, all returned after 50 days; level 1 has C
	// (recency 10, lapsed) and E (5), and no lapse early enough to watch.
	// The whole (index 0) still counts D's lapses: 20 episodes, 15 returns.
	tests := []struct {
		g                        int
		active, lapsed, eps, ret int
		median                   float64
	}{
		{0, 40, 30, 20, 15, 50},
		{1, 20, 20, 10, 10, 50},
		{2, 20, 10, 0, 0, 0},
	}
	for _, tt := range tests {
		c := cells[9][tt.g]
		if c.Active != tt.active || c.Lapsed != tt.lapsed || c.Episodes != tt.eps || c.Returned != tt.ret || c.MedianExtraWait != tt.median {
			t.Errorf("group %d at X=10: %+v; want active %d lapsed %d episodes %d returned %d median %v", tt.g, c, tt.active, tt.lapsed, tt.eps, tt.ret, tt.median)
		}
	}
}
