package lists

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"ebb/internal/frame"
	"ebb/internal/snapshots"
)

var nan = math.NaN()

// allFeatures is every feature a model may be trained on, in the order
// snapshots builds them.
var allFeatures = append(slices.Clone(snapshots.Features), snapshots.FeatureBGNBD)

// Every feature snapshots builds, and its missing-value indicator, belongs
// to one of the named families, so no reason falls back to a raw name.
func TestFamiliesCoverFeatures(t *testing.T) {
	named := []string{famRecency, famFrequency, famTenure, famSpend, famBGNBD}
	for _, name := range allFeatures {
		for _, n := range []string{name, name + frame.MissingSuffix} {
			if f := family(n); !slices.Contains(named, f) {
				t.Errorf("family(%q) = %q, want one of %q", n, f, named)
			}
		}
	}
	if f := family("region=north"); f != "region=north" {
		t.Errorf("family(%q) = %q, want the name itself", "region=north", f)
	}
}

// row lays out a customer: every feature of allFeatures with the value in
// vals (NaN when absent), contributions from contrib (0 when absent), plus
// any extra feature named in vals.
func row(vals, contrib map[string]float64) (names []string, values, cs []float64) {
	names = slices.Clone(allFeatures)
	for n := range vals {
		if !slices.Contains(names, n) {
			names = append(names, n)
		}
	}
	for n := range contrib {
		if !slices.Contains(names, n) {
			names = append(names, n)
		}
	}
	slices.Sort(names[len(allFeatures):])
	for _, n := range names {
		v, ok := vals[n]
		if !ok {
			v = nan
		}
		values = append(values, v)
		cs = append(cs, contrib[n])
	}
	return names, values, cs
}

// The wording of each family, on hand-made customers: each case gives one
// family all the weight, so the single reason is that family's text.
func TestReasonTexts(t *testing.T) {
	tests := []struct {
		name    string
		vals    map[string]float64
		feature string // the feature given weight 1
		want    string
	}{
		{"lapsed regular", map[string]float64{"recency_days": 74, "mean_gap_days": 30.4, "order_days_total": 8}, "recency_over_gap", "no order for 74 days, usually orders every 30 days"},
		{"one order", map[string]float64{"recency_days": 74, "order_days_total": 1}, "mean_gap_days" + frame.MissingSuffix, "ordered once, 74 days ago"},
		{"one order today", map[string]float64{"recency_days": 0, "order_days_total": 1}, "recency_days", "ordered once, today"},
		{"ordered today", map[string]float64{"recency_days": 0, "mean_gap_days": 1.2, "order_days_total": 30}, "recency_days", "last order today, usually orders every day"},
		{"one day", map[string]float64{"recency_days": 1, "order_days_total": 3}, "recency_days", "no order for 1 day"},
		{"no recency", map[string]float64{"mean_gap_days": 45}, "last_gap_days", "usually orders every 45 days"},
		{"recency unknown", nil, "recency_days", "time since the last order"},
		{"fewer orders", map[string]float64{"order_days_180": 2, "order_trend": -3}, "order_days_365", "2 order days in the last 6 months, 3 fewer than in the 6 months before"},
		{"one fewer", map[string]float64{"order_days_180": 1, "order_trend": -1}, "order_trend", "1 order day in the last 6 months, 1 fewer than in the 6 months before"},
		{"more orders", map[string]float64{"order_days_180": 9, "order_trend": 4}, "order_days_90", "9 order days in the last 6 months, 4 more than in the 6 months before"},
		{"same orders", map[string]float64{"order_days_180": 0, "order_trend": 0}, "order_days_30", "no order days in the last 6 months, the same as in the 6 months before"},
		{"year only", map[string]float64{"order_days_365": 5}, "order_days_365", "5 order days in the last year"},
		{"new customer", map[string]float64{"tenure_days": 20}, "tenure_days", "first order 20 days ago"},
		{"new today", map[string]float64{"tenure_days": 0}, "tenure_days", "first order today"},
		{"two months", map[string]float64{"tenure_days": 61}, "tenure_days", "customer for 2 months"},
		{"just under two months", map[string]float64{"tenure_days": 60}, "tenure_days", "first order 60 days ago"},
		{"months", map[string]float64{"tenure_days": 430}, "tenure_days", "customer for 14 months"},
		{"years", map[string]float64{"tenure_days": 1000}, "tenure_days", "customer for 2 years"},
		{"spent nothing", map[string]float64{"spend_180": 0, "mean_order_value": 33.1}, "spend_180", "spent nothing in the last 6 months, average order 33.10"},
		{"spent", map[string]float64{"spend_180": 1250.5, "mean_order_value": 62.5}, "mean_order_value", "spent 1250.50 in the last 6 months, average order 62.50"},
		{"no amounts", map[string]float64{"spend_180": 0}, "mean_order_value" + frame.MissingSuffix, "no order amounts on record"},
		{"bgnbd", map[string]float64{"p_active_bgnbd": 0.35}, "p_active_bgnbd", "purchase pattern gives a 35% chance of still being active (BG/NBD)"},
		{"bgnbd tiny", map[string]float64{"p_active_bgnbd": 0.001}, "p_active_bgnbd", "purchase pattern gives a less than 1% chance of still being active (BG/NBD)"},
		{"bgnbd near one", map[string]float64{"p_active_bgnbd": 0.999}, "p_active_bgnbd", "purchase pattern gives a more than 99% chance of still being active (BG/NBD)"},
		{"attribute level", map[string]float64{"region=north": 1}, "region=north", "region is north"},
		{"attribute other level", map[string]float64{"region=north": 0}, "region=north", "region is not north"},
		{"other feature", map[string]float64{"loyalty_points": 120}, "loyalty_points", "loyalty_points: 120"},
		{"other feature missing", map[string]float64{"loyalty_points": nan}, "loyalty_points" + frame.MissingSuffix, "loyalty_points: missing"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			names, values, cs := row(tt.vals, map[string]float64{tt.feature: 1})
			rs := Reasons(names, values, cs, 3)
			if len(rs) != 1 || rs[0].Text != tt.want || rs[0].Weight != 1 {
				t.Errorf("Reasons = %+v, want one reason %q with weight 1", rs, tt.want)
			}
		})
	}
}

// A whole customer: families are summed, ordered by weight, cut at the
// limit, and those pushing against the score's direction are dropped.
func TestReasonsCustomer(t *testing.T) {
	vals := map[string]float64{
		"recency_days": 74, "order_days_30": 0, "order_days_90": 0, "order_days_180": 2, "order_days_365": 7,
		"order_days_total": 12, "tenure_days": 430, "mean_gap_days": 30.4, "last_gap_days": 21,
		"recency_over_gap": 74 / 30.4, "spend_180": 66.2, "mean_order_value": 33.1, "order_trend": -3,
		"p_active_bgnbd": 0.35,
	}
	contrib := map[string]float64{
		"recency_days": 0.5, "recency_over_gap": 0.4, "last_gap_days": -0.1, // recency 0.8
		"order_days_180": 0.3, "order_trend": 0.4, "order_days_30": 0.2, // frequency 0.9
		"p_active_bgnbd": 0.25, // bgnbd 0.25
		"spend_180":      0.1,  // spend 0.1
		"tenure_days":    -0.6, // against: dropped
	}
	names, values, cs := row(vals, contrib)
	rs := Reasons(names, values, cs, 3)
	want := []Reason{
		{famFrequency, 0.9, "2 order days in the last 6 months, 3 fewer than in the 6 months before"},
		{famRecency, 0.8, "no order for 74 days, usually orders every 30 days"},
		{famBGNBD, 0.25, "purchase pattern gives a 35% chance of still being active (BG/NBD)"},
	}
	if len(rs) != len(want) {
		t.Fatalf("Reasons = %+v, want %+v", rs, want)
	}
	for i := range want {
		if rs[i].Family != want[i].Family || rs[i].Text != want[i].Text || math.Abs(rs[i].Weight-want[i].Weight) > 1e-12 {
			t.Errorf("reason %d = %+v, want %+v", i, rs[i], want[i])
		}
	}
	wantJoined := "2 order days in the last 6 months, 3 fewer than in the 6 months before; no order for 74 days, usually orders every 30 days; purchase pattern gives a 35% chance of still being active (BG/NBD)"
	if got := JoinReasons(rs); got != wantJoined {
		t.Errorf("JoinReasons = %q, want %q", got, wantJoined)
	}

	// The same customer scored below the base rate: only the tenure
	// family pushes that way once every other contribution is made small.
	for n := range contrib {
		if n != "tenure_days" {
			contrib[n] = 0.01
		}
	}
	contrib["tenure_days"] = -2
	names, values, cs = row(vals, contrib)
	rs = Reasons(names, values, cs, 3)
	if len(rs) != 1 || rs[0].Family != famTenure || rs[0].Text != "customer for 14 months" {
		t.Errorf("Reasons below the base rate = %+v, want only the tenure reason", rs)
	}
}

func TestReasonsEdges(t *testing.T) {
	names := []string{"recency_days", "tenure_days", "spend_180"}
	values := []float64{10, 400, 5}
	tests := []struct {
		name    string
		contrib []float64
		limit   int
		want    []string // families
	}{
		{"no push", []float64{0, 0, 0}, 3, nil},
		{"pushes cancel", []float64{0.5, -0.5, 0}, 3, nil},
		{"limit 0", []float64{1, 1, 1}, 0, nil},
		{"zero family skipped", []float64{1, 0, 0.5}, 3, []string{famRecency, famSpend}},
		{"tie by name", []float64{0.5, 0.5, 0.5}, 2, []string{famRecency, famSpend}},
		{"NaN", []float64{nan, 1, 1}, 3, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			rs := Reasons(names, values, tt.contrib, tt.limit)
			var got []string
			for _, r := range rs {
				got = append(got, r.Family)
			}
			if !slices.Equal(got, tt.want) {
				t.Errorf("Reasons families = %q, want %q", got, tt.want)
			}
		})
	}
	if got := JoinReasons(nil); got != "" {
		t.Errorf("JoinReasons(nil) = %q, want empty", got)
	}
}

func TestReasonsPanicsOnLengths(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("Reasons with 2 names and 1 contribution did not panic")
		}
	}()
	Reasons([]string{"a", "b"}, []float64{1, 2}, []float64{1}, 3)
}

// Property: for random contributions, every reason's weight has the sign
// of the total contribution and equals its family's sum, the families are
// distinct, ordered by |weight|, at most the limit, and no family pushing
// the score's way is left out ahead of a weaker one.
func TestReasonsAgreeWithScore(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 13))
	pool := append(slices.Clone(allFeatures), "mean_gap_days"+frame.MissingSuffix, "region=north", "loyalty_points")
	for trial := range 2000 {
		var names []string
		for _, n := range pool {
			if rng.IntN(3) > 0 {
				names = append(names, n)
			}
		}
		values := make([]float64, len(names))
		contrib := make([]float64, len(names))
		var total float64
		sums := map[string]float64{}
		for j, n := range names {
			values[j] = float64(rng.IntN(200))
			if rng.IntN(5) > 0 {
				contrib[j] = rng.NormFloat64()
			}
			total += contrib[j]
			sums[family(n)] += contrib[j]
		}
		limit := rng.IntN(5)
		rs := Reasons(names, values, contrib, limit)
		if len(rs) > limit {
			t.Fatalf("trial %d: %d reasons, limit %d", trial, len(rs), limit)
		}
		var agreeing int
		for _, s := range sums {
			if s*total > 0 {
				agreeing++
			}
		}
		if want := min(limit, agreeing); total != 0 && len(rs) != want {
			t.Fatalf("trial %d: %d reasons, want %d", trial, len(rs), want)
		}
		seen := map[string]bool{}
		for i, r := range rs {
			if !(r.Weight*total > 0) {
				t.Fatalf("trial %d: reason %+v against total %v", trial, r, total)
			}
			if r.Weight != sums[r.Family] {
				t.Fatalf("trial %d: reason %+v, family sum %v", trial, r, sums[r.Family])
			}
			if seen[r.Family] {
				t.Fatalf("trial %d: family %q twice", trial, r.Family)
			}
			seen[r.Family] = true
			if i > 0 && math.Abs(r.Weight) > math.Abs(rs[i-1].Weight) {
				t.Fatalf("trial %d: reasons out of order: %+v", trial, rs)
			}
			if r.Text == "" {
				t.Fatalf("trial %d: reason %+v has no text", trial, r)
			}
		}
	}
}
