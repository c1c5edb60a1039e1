package outcomes

import (
	"fmt"
	"testing"
)

// The R help page example of power.prop.test: "power.prop.test(p1 = .50,
// p2 = .75, power = .90)  # => n = 76.7". Source: R 4.2.2 stats; the full
// n printed by power.prop.test(p1 = .50, p2 = .75, power = .90, tol =
// 1e-12)$n (testdata/power.R). At that n the power must be 0.90 (to the
// root-finder's tolerance; 1e-9 here).
func TestPowerHelpPageExample(t *testing.T) {
	const n = 76.706928451777443
	near(t, "power at n = 76.70693", powerOf(n, n, .50, .75, Z95), 0.90, 1e-9)
	// The default tol = .Machine$double.eps^0.25 gives 76.706930114107664,
	// the "76.7" of the help page.
	near(t, "power at the default-tol n", powerOf(76.706930114107664, 76.706930114107664, .50, .75, Z95), 0.90, 1e-6)
}

// Power against R 4.2.2 stats::power.prop.test(n, p1, p2, sig.level)$power
// (strict = FALSE, the default), which is a closed form: tolerance 1e-12.
func TestPowerAgainstR(t *testing.T) {
	tests := []struct {
		call   string // the R call that printed want
		n      int
		p1, p2 float64
		alpha  float64
		want   float64
	}{
		{"power.prop.test(n = 77, p1 = .50, p2 = .75)$power", 77, .50, .75, .05, 0.90110427253775738},
		{"power.prop.test(n = 76, p1 = .50, p2 = .75)$power", 76, .50, .75, .05, 0.89729042660579039},
		{"power.prop.test(n = 100, p1 = 0.2, p2 = 0.3)$power", 100, .2, .3, .05, 0.37101258904400602},
		{"power.prop.test(n = 30, p1 = 0.4, p2 = 0.6, sig.level = 0.1)$power", 30, .4, .6, .1, 0.46111191012664265},
	}
	for _, tt := range tests {
		t.Run(tt.call, func(t *testing.T) {
			near(t, "Power", Power(tt.n, tt.n, tt.p1, tt.p2, tt.alpha), tt.want, 1e-12)
			near(t, "Power, groups swapped", Power(tt.n, tt.n, tt.p2, tt.p1, tt.alpha), tt.want, 1e-12)
		})
	}
}

func TestPowerDegenerate(t *testing.T) {
	near(t, "Power, equal rates", Power(50, 80, .3, .3, .05), .025, 1e-12)
	near(t, "Power, both 0", Power(50, 80, 0, 0, .05), .025, 1e-12)
	near(t, "Power, 0 vs 1", Power(50, 80, 0, 1, .05), 1, 0)
}

func TestPowerPanicsOnMisuse(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("Power(0, 10, …) did not panic")
		}
	}()
	Power(0, 10, .2, .3, .05)
}

// MinDetectableEffect for equal groups against R 4.2.2
// stats::power.prop.test solved for a rate, tol = 1e-12 (uniroot's
// tolerance on the rate; 1e-9 here). With p2 = base given, R's p1 is
// base − δ directly; with p1 given, R's p2 is the base and p2 − p1 is δ
// (the equation is symmetric for equal groups).
func TestMinDetectableEffectEqualGroupsAgainstR(t *testing.T) {
	tests := []struct {
		call string
		n    int
		base float64
		want float64
	}{
		{"power.prop.test(n = 100, p2 = 0.3, power = 0.8, tol = 1e-12)$p1 = 0.13721201207819325", 100, .3, 0.16278798792180674},
		{"power.prop.test(n = 500, p2 = 0.2, power = 0.8, tol = 1e-12)$p1 = 0.13399175613102002", 500, .2, 0.066008243868979993},
		{"power.prop.test(n = 1000, p2 = 0.5, power = 0.8, tol = 1e-12)$p1 = 0.43751391741109574", 1000, .5, 0.062486082588904257},
		{"power.prop.test(n = 50, p2 = 0.6, power = 0.8, tol = 1e-12)$p1 = 0.32393371140074229", 50, .6, 0.27606628859925769},
		{"power.prop.test(n = 2000, p2 = 0.1, power = 0.8, tol = 1e-12)$p1 = 0.074975316188619578", 2000, .1, 0.025024683811380427},
		{"power.prop.test(n = 250, p2 = 0.15, power = 0.8, tol = 1e-12)$p1 = 0.071540899950398279", 250, .15, 0.078459100049601715},
		{"power.prop.test(n = 100, p1 = 0.3, power = 0.8, tol = 1e-12)$p2 = 0.49265675508328538", 100, 0.49265675508328538, 0.19265675508328539},
		{"power.prop.test(n = 500, p1 = 0.2, power = 0.8, tol = 1e-12)$p2 = 0.27533170703604604", 500, 0.27533170703604604, 0.075331707036046025},
	}
	for _, tt := range tests {
		t.Run(tt.call, func(t *testing.T) {
			got, err := MinDetectableEffect(tt.n, tt.n, tt.base, .05, .8)
			if err != nil {
				t.Fatal(err)
			}
			near(t, fmt.Sprintf("MinDetectableEffect(%d, %d, %v)", tt.n, tt.n, tt.base), got, tt.want, 1e-9)
			near(t, "Power at the effect", Power(tt.n, tt.n, tt.base-got, tt.base, .05), .8, 1e-9)
		})
	}
}

// Unequal groups (a 10% holdout): power.prop.test takes one n, so these
// come from an own R implementation of the same equation solved with
// uniroot(tol = 1e-14) (function mde in testdata/power.R, R 4.2.2);
// tolerance 1e-9.
func TestMinDetectableEffectUnequalGroups(t *testing.T) {
	tests := []struct {
		name         string
		n1, n2       int
		base         float64
		alpha, power float64
		want         float64
	}{
		{"900 vs 100 at 40%", 900, 100, .4, .05, .8, 0.13560168663213368},
		{"4500 vs 500 at 25%", 4500, 500, .25, .05, .8, 0.054090177331955258},
		{"120 vs 35 at 60%", 120, 35, .6, .05, .8, 0.26277761592490467},
		{"300 vs 60 at 100%", 300, 60, 1, .05, .8, 0.084372155484981018},
		{"900 vs 100 at 40%, 10% level, 90% power", 900, 100, .4, .1, .9, 0.14262333122590623},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := MinDetectableEffect(tt.n1, tt.n2, tt.base, tt.alpha, tt.power)
			if err != nil {
				t.Fatal(err)
			}
			near(t, "MinDetectableEffect", got, tt.want, 1e-9)
			near(t, "Power at the effect", Power(tt.n1, tt.n2, tt.base-got, tt.base, tt.alpha), tt.power, 1e-9)
		})
	}
}

func TestMinDetectableEffectErrors(t *testing.T) {
	tests := []struct {
		name         string
		n1, n2       int
		base         float64
		alpha, power float64
	}{
		{"no contacted", 0, 10, .3, .05, .8},
		{"no holdout", 10, 0, .3, .05, .8},
		{"base 0", 10, 10, 0, .05, .8},
		{"base above 1", 10, 10, 1.2, .05, .8},
		{"base NaN", 10, 10, nan(), .05, .8},
		{"alpha 0", 10, 10, .3, 0, .8},
		{"alpha 1", 10, 10, .3, 1, .8},
		{"power below half", 10, 10, .3, .05, .4},
		{"power 1", 10, 10, .3, .05, 1},
		{"not detectable", 2, 2, .3, .05, .8},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := MinDetectableEffect(tt.n1, tt.n2, tt.base, tt.alpha, tt.power)
			wantInvalid(t, err)
		})
	}
}
