package survival

import (
	"math"
	"strconv"
	"testing"
)

// Reference checks against R. The data files and expected values in
// testdata are copies; testdata/README.md names where each came from.

// TestRowsAgainstR compares the full Kaplan–Meier tables of aml (both
// groups) and gehan (both groups) with testdata/km_expected.csv.
//
// Source: R 4.2.2, survival 3.5.3 (shared reference, check 2a/2b):
// summary(survfit(Surv(time, status) ~ x, data = aml), censored = FALSE) and
// summary(survfit(Surv(time, cens) ~ treat, data = MASS::gehan)), default
// conf.type = "log", conf.int = 0.95; values printed with 12 decimals.
// Confirmed there with numpy and statsmodels 0.13.5 SurvfuncRight.
// Tolerance 1e-11 (the printed precision; the reference allows 1e-9 for
// surv and std.err, 1e-8 for the limits).
func TestRowsAgainstR(t *testing.T) {
	const tol = 1e-11
	tb := mustReadCSV(t, "km_expected.csv")
	type group struct{ dataset, stratum string }
	want := map[group][][]string{}
	var order []group
	for _, r := range tb.rows {
		g := group{tb.get(t, r, "dataset"), tb.get(t, r, "stratum")}
		if _, ok := want[g]; !ok {
			order = append(order, g)
		}
		want[g] = append(want[g], r)
	}
	if len(order) != 4 {
		t.Fatalf("km_expected.csv has %d groups, want 4 (aml ×2, gehan ×2)", len(order))
	}
	for _, g := range order {
		times, events := mustEpisodes(t, g.dataset, g.stratum)
		for _, bl := range builders {
			t.Run(key(g.dataset, g.stratum, bl.name), func(t *testing.T) {
				rows := bl.build(t, times, events).Rows()
				exp := want[g]
				if len(rows) != len(exp) {
					t.Fatalf("len(Rows()) = %d, want %d", len(rows), len(exp))
				}
				for i, r := range exp {
					got := rows[i]
					if wt := tb.num(t, r, "time"); got.Time != wt {
						t.Errorf("row %d: Time = %v, want %v", i, got.Time, wt)
					}
					if w := tb.int(t, r, "n_risk"); got.NRisk != w {
						t.Errorf("t=%v: NRisk = %d, want %d", got.Time, got.NRisk, w)
					}
					if w := tb.int(t, r, "n_event"); got.NEvent != w {
						t.Errorf("t=%v: NEvent = %d, want %d", got.Time, got.NEvent, w)
					}
					for _, c := range []struct {
						name      string
						got, want float64
					}{
						{"Surv", got.Surv, tb.num(t, r, "surv")},
						{"StdErr", got.StdErr, tb.num(t, r, "se_surv")},
						{"Lower", got.Lower, tb.num(t, r, "lower95_log")},
						{"Upper", got.Upper, tb.num(t, r, "upper95_log")},
					} {
						if !near(c.got, c.want, tol) {
							t.Errorf("t=%v: %s = %.12f, want %.12f", got.Time, c.name, c.got, c.want)
						}
					}
				}
			})
		}
	}
}

// TestConfTypesAgainstR compares every row of every interval type for aml,
// gehan, lung, veteran and a synthetic whole-day data set with
// testdata/km_conf_types.csv.
//
// Source: computed for this package with R 4.2.2 and survival 3.5.3 (Debian
// bookworm r-cran-survival 3.5-3-1, the versions of the shared reference) by
// testdata/km_extra.R: summary(survfit(Surv(time, event) ~ 1, conf.type =
// "log" / "log-log" / "plain"), censored = FALSE) per stratum, written with
// 17 significant digits. Not part of the shared reference; the log rows of
// aml and gehan agree with its km_expected.csv. Tolerance 1e-12.
func TestConfTypesAgainstR(t *testing.T) {
	const tol = 1e-12
	tb := mustReadCSV(t, "km_conf_types.csv")
	type group struct{ dataset, stratum, conf string }
	want := map[group][][]string{}
	var order []group
	for _, r := range tb.rows {
		g := group{tb.get(t, r, "dataset"), tb.get(t, r, "stratum"), tb.get(t, r, "conf_type")}
		if _, ok := want[g]; !ok {
			order = append(order, g)
		}
		want[g] = append(want[g], r)
	}
	if len(order) != 8*3 {
		t.Fatalf("km_conf_types.csv has %d groups, want 24", len(order))
	}
	for _, g := range order {
		t.Run(key(g.dataset, g.stratum, g.conf), func(t *testing.T) {
			times, events := mustEpisodes(t, g.dataset, g.stratum)
			c := mustCurve(t, times, events).WithConfidence(parseConf(t, g.conf), 0.95)
			rows := c.Rows()
			if len(rows) != len(want[g]) {
				t.Fatalf("len(Rows()) = %d, want %d", len(rows), len(want[g]))
			}
			for i, r := range want[g] {
				got := rows[i]
				if wt := tb.num(t, r, "time"); got.Time != wt {
					t.Fatalf("row %d: Time = %v, want %v", i, got.Time, wt)
				}
				if w, w2 := tb.int(t, r, "n_risk"), tb.int(t, r, "n_event"); got.NRisk != w || got.NEvent != w2 {
					t.Errorf("t=%v: NRisk, NEvent = %d, %d, want %d, %d", got.Time, got.NRisk, got.NEvent, w, w2)
				}
				for _, c := range []struct {
					name      string
					got, want float64
				}{
					{"Surv", got.Surv, tb.num(t, r, "surv")},
					{"StdErr", got.StdErr, tb.num(t, r, "se_surv")},
					{"Lower", got.Lower, tb.num(t, r, "lower")},
					{"Upper", got.Upper, tb.num(t, r, "upper")},
				} {
					if !near(c.got, c.want, tol) {
						t.Errorf("t=%v: %s = %.15g, want %.15g", got.Time, c.name, c.got, c.want)
					}
				}
			}
		})
	}
}

// TestQuantilesPublished checks the quantiles and their 95% limits (log
// intervals) quoted in the shared reference.
//
// Source: shared reference README §2a–2d and scripts/output.txt: R 4.2.2,
// survival 3.5.3, quantile(survfit(…), probs = c(.25, .5, .75)) for
// survfit(Surv(time, status) ~ x, data = aml), survfit(Surv(time, cens) ~
// treat, data = MASS::gehan), survfit(Surv(time, event) ~ 1, data = lung)
// and survfit(Surv(time, status) ~ trt, data = veteran). NA (never reached)
// is written as na. veteran trt = 2 exercises the midpoint rule: S = 0.5
// exactly on [52, 53) gives a median of 52.5, and S = 0.75 on [24, 25)
// gives 24.5. statsmodels 0.13.5 confirms lung's 170 / 310 / 550. Exact.
func TestQuantilesPublished(t *testing.T) {
	na := math.NaN()
	tests := []struct {
		dataset, stratum string
		p                float64
		q, lo, hi        float64
	}{
		{"aml", "Maintained", 0.25, 18, 13, na},
		{"aml", "Maintained", 0.50, 31, 18, na},
		{"aml", "Maintained", 0.75, 48, 34, na},
		{"aml", "Nonmaintained", 0.25, 8, 5, 30},
		{"aml", "Nonmaintained", 0.50, 23, 8, na},
		{"aml", "Nonmaintained", 0.75, 33, 27, na},
		{"gehan", "6-MP", 0.25, 13, 6, na},
		{"gehan", "6-MP", 0.50, 23, 16, na},
		{"gehan", "6-MP", 0.75, na, 23, na},
		{"gehan", "control", 0.25, 4, 2, 8},
		{"gehan", "control", 0.50, 8, 4, 12},
		{"gehan", "control", 0.75, 12, 8, na},
		{"lung", "all", 0.25, 170, 145, 197},
		{"lung", "all", 0.50, 310, 285, 363},
		{"lung", "all", 0.75, 550, 460, 654},
		{"veteran", "1", 0.25, 27, 16, 54},
		{"veteran", "1", 0.50, 103, 59, 132},
		{"veteran", "1", 0.75, 162, 139, 260},
		{"veteran", "2", 0.25, 24.5, 19, 43},
		{"veteran", "2", 0.50, 52.5, 44, 95},
		{"veteran", "2", 0.75, 140, 99, 340},
	}
	for _, tt := range tests {
		t.Run(key(tt.dataset, tt.stratum, ftoa(tt.p)), func(t *testing.T) {
			times, events := mustEpisodes(t, tt.dataset, tt.stratum)
			c := mustCurve(t, times, events)
			checkQuantile(t, c, tt.p, tt.q, tt.lo, tt.hi, 0)
		})
	}
}

// TestMedianPublished checks Median and MedianCI against the medians with
// 0.95LCL and 0.95UCL that print(survfit(…)) shows (same source as
// TestQuantilesPublished; shared reference README §2a–2d). Exact.
func TestMedianPublished(t *testing.T) {
	na := math.NaN()
	tests := []struct {
		dataset, stratum string
		med, lo, hi      float64
	}{
		{"aml", "Maintained", 31, 18, na},
		{"aml", "Nonmaintained", 23, 8, na},
		{"gehan", "6-MP", 23, 16, na},
		{"gehan", "control", 8, 4, 12},
		{"lung", "all", 310, 285, 363},
		{"veteran", "1", 103, 59, 132},
		{"veteran", "2", 52.5, 44, 95}, // the midpoint rule
	}
	for _, tt := range tests {
		t.Run(key(tt.dataset, tt.stratum), func(t *testing.T) {
			times, events := mustEpisodes(t, tt.dataset, tt.stratum)
			c := mustCurve(t, times, events)
			med, ok := c.Median()
			if !near(nanUnless(med, ok), tt.med, 0) {
				t.Errorf("Median() = %v, %v, want %v", med, ok, tt.med)
			}
			lo, hi, loOK, hiOK := c.MedianCI()
			if !near(nanUnless(lo, loOK), tt.lo, 0) || !near(nanUnless(hi, hiOK), tt.hi, 0) {
				t.Errorf("MedianCI() = %v, %v, %v, %v, want %v, %v (NaN: not reached)", lo, hi, loOK, hiOK, tt.lo, tt.hi)
			}
		})
	}
}

// TestQuantilesAgainstR checks Quantile and QuantileCI for p = 0.1, 0.25,
// 0.5, 0.75, 0.9 and all three interval types against
// testdata/km_quantiles.csv.
//
// Source: computed for this package with R 4.2.2, survival 3.5.3 by
// testdata/km_extra.R: quantile(survfit(Surv(time, event) ~ 1, conf.type =
// …), probs = c(.1, .25, .5, .75, .9)) per stratum. Exact.
func TestQuantilesAgainstR(t *testing.T) {
	tb := mustReadCSV(t, "km_quantiles.csv")
	for _, r := range tb.rows {
		ds, st, conf := tb.get(t, r, "dataset"), tb.get(t, r, "stratum"), tb.get(t, r, "conf_type")
		p := tb.num(t, r, "p")
		t.Run(key(ds, st, conf, ftoa(p)), func(t *testing.T) {
			times, events := mustEpisodes(t, ds, st)
			c := mustCurve(t, times, events).WithConfidence(parseConf(t, conf), 0.95)
			checkQuantile(t, c, p, tb.num(t, r, "quantile"), tb.num(t, r, "lower"), tb.num(t, r, "upper"), 0)
		})
	}
}

// TestMedianAgainstRPrint checks Median and MedianCI for every interval
// type against what print(survfit(…)) shows (median, 0.95LCL, 0.95UCL),
// testdata/km_medians_print.csv.
//
// Source: computed for this package with R 4.2.2, survival 3.5.3 by
// testdata/km_extra.R (summary(fit)$table, the numbers print shows). Exact.
func TestMedianAgainstRPrint(t *testing.T) {
	tb := mustReadCSV(t, "km_medians_print.csv")
	for _, r := range tb.rows {
		ds, st, conf := tb.get(t, r, "dataset"), tb.get(t, r, "stratum"), tb.get(t, r, "conf_type")
		t.Run(key(ds, st, conf), func(t *testing.T) {
			times, events := mustEpisodes(t, ds, st)
			c := mustCurve(t, times, events).WithConfidence(parseConf(t, conf), 0.95)
			med, ok := c.Median()
			if w := tb.num(t, r, "median"); !near(nanUnless(med, ok), w, 0) {
				t.Errorf("Median() = %v, %v, want %v", med, ok, w)
			}
			lo, hi, loOK, hiOK := c.MedianCI()
			wlo, whi := tb.num(t, r, "lcl"), tb.num(t, r, "ucl")
			if !near(nanUnless(lo, loOK), wlo, 0) || !near(nanUnless(hi, hiOK), whi, 0) {
				t.Errorf("MedianCI() = %v, %v, %v, %v, want %v, %v (NaN: not reached)", lo, hi, loOK, hiOK, wlo, whi)
			}
		})
	}
}

// TestPointAtLung checks the estimate at fixed days for the lung data.
//
// Source: shared reference README §2c: R 4.2.2, survival 3.5.3,
// summary(survfit(Surv(time, event) ~ 1, data = lung), times = c(30, 90,
// 180, 365, 500, 730, 1000)), conf.type = "log", 12 decimals; surv and
// std.err confirmed there with numpy and statsmodels. Tolerance 1e-11.
func TestPointAtLung(t *testing.T) {
	const tol = 1e-11
	times, events := mustEpisodes(t, "lung", "all")
	tests := []struct {
		t                      float64
		nRisk                  int
		surv, se, lower, upper float64
	}{
		{30, 219, 0.956140350877, 0.013562069833, 0.929925266889, 0.983094451916},
		{90, 201, 0.881578947368, 0.021398219606, 0.840621182857, 0.924532305744},
		{180, 160, 0.721670653410, 0.029812419469, 0.665542307131, 0.782532569925},
		{365, 65, 0.409241624460, 0.035823638172, 0.344721581796, 0.485837603547},
		{500, 41, 0.293269193712, 0.035077818499, 0.231982138262, 0.370747595588},
		{730, 13, 0.115693098345, 0.028298197318, 0.071631824962, 0.186856791820},
		{1000, 2, 0.050345568071, 0.022848048916, 0.020685460199, 0.122534195517},
	}
	for _, bl := range builders {
		c := bl.build(t, times, events)
		if c.N() != 228 || c.Events() != 165 {
			t.Fatalf("%s: N(), Events() = %d, %d, want 228, 165", bl.name, c.N(), c.Events())
		}
		for _, tt := range tests {
			t.Run(key(bl.name, ftoa(tt.t)), func(t *testing.T) {
				got := c.PointAt(tt.t)
				if got.NRisk != tt.nRisk || c.AtRisk(tt.t) != tt.nRisk {
					t.Errorf("PointAt(%v).NRisk = %d, AtRisk = %d, want %d", tt.t, got.NRisk, c.AtRisk(tt.t), tt.nRisk)
				}
				if !near(got.Surv, tt.surv, tol) || !near(c.At(tt.t), tt.surv, tol) || !near(c.CDF(tt.t), 1-tt.surv, tol) {
					t.Errorf("PointAt(%v).Surv = %.12f, At = %.12f, CDF = %.12f, want S %.12f", tt.t, got.Surv, c.At(tt.t), c.CDF(tt.t), tt.surv)
				}
				if !near(got.StdErr, tt.se, tol) || !near(got.Lower, tt.lower, tol) || !near(got.Upper, tt.upper, tol) {
					t.Errorf("PointAt(%v) se, lower, upper = %.12f, %.12f, %.12f, want %.12f, %.12f, %.12f",
						tt.t, got.StdErr, got.Lower, got.Upper, tt.se, tt.lower, tt.upper)
				}
			})
		}
	}
}

// TestRestrictedMeanLung checks the area under the lung curve on [0, 365].
//
// Source: shared reference README §2c: R 4.2.2, survival 3.5.3,
// print(survfit(Surv(time, event) ~ 1, data = lung), rmean = 365) →
// 263.22186648201 (output.txt); confirmed there by direct integration.
// Tolerance 1e-10.
func TestRestrictedMeanLung(t *testing.T) {
	times, events := mustEpisodes(t, "lung", "all")
	c := mustCurve(t, times, events)
	if got, want := c.RestrictedMean(365), 263.22186648201; !near(got, want, 1e-10) {
		t.Errorf("RestrictedMean(365) = %.11f, want %.11f", got, want)
	}
}

// TestNormalQuantile checks z for 95% and 90% intervals against R 4.2.2
// sprintf("%.17g", qnorm(c(0.975, 0.95))) = 1.9599639845400536,
// 1.6448536269514715 (run for this package; the shared reference README §2
// quotes the first as 1.959963984540054). Exact: both use AS 241.
func TestNormalQuantile(t *testing.T) {
	tests := []struct {
		level, want float64
	}{
		{0.95, 1.9599639845400536},
		{0.90, 1.6448536269514715},
	}
	for _, tt := range tests {
		if got := normalQuantile(tt.level); got != tt.want {
			t.Errorf("normalQuantile(%v) = %.16f, want %.16f", tt.level, got, tt.want)
		}
	}
}

// checkQuantile checks Quantile(p) and QuantileCI(p) to tol; a NaN want
// means "never reached" (R's NA).
func checkQuantile(t *testing.T, c *Curve, p, q, lo, hi, tol float64) {
	t.Helper()
	got, ok := c.Quantile(p)
	if !near(nanUnless(got, ok), q, tol) {
		t.Errorf("Quantile(%v) = %v, %v, want %v (NaN: not reached)", p, got, ok, q)
	}
	glo, ghi, loOK, hiOK := c.QuantileCI(p)
	if !near(nanUnless(glo, loOK), lo, tol) || !near(nanUnless(ghi, hiOK), hi, tol) {
		t.Errorf("QuantileCI(%v) = %v, %v, %v, %v, want %v, %v (NaN: not reached)", p, glo, ghi, loOK, hiOK, lo, hi)
	}
}

func nanUnless(v float64, ok bool) float64 {
	if !ok {
		return math.NaN()
	}
	return v
}

func ftoa(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
