package outcomes

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

func TestZ95(t *testing.T) {
	if got := distuv.UnitNormal.Quantile(0.975); math.Abs(got-Z95) > 1e-15 {
		t.Errorf("UnitNormal.Quantile(0.975) = %.17g, want Z95 = %.17g", got, Z95)
	}
}

// Wilson (1927) score interval. Source: the project's shared reference,
// check 7 — computed with statsmodels 0.13.5
// proportion_confint(x, n, alpha=0.05, method="wilson") and an own
// implementation of the formula (identical to 1e-10); tolerance 1e-9. The
// "published" limits are Newcombe (1998), Statistics in Medicine 17,
// 857–872, 4 dp, recalled from memory (confirmed by the computation);
// tolerance 5e-5.
func TestWilson(t *testing.T) {
	tests := []struct {
		x, n         int
		lo, hi       float64 // z = Z95
		lo196, hi196 float64 // z = 1.96
		pubLo, pubHi float64
		hasPublished bool
	}{
		{81, 263, 0.2552885199, 0.3662095770, 0.2552876131, 0.3662106841, 0.2553, 0.3662, true},
		{15, 148, 0.0623863995, 0.1604872417, 0.0623858451, 0.1604885187, 0.0624, 0.1605, true},
		{0, 20, 0, 0.1611251581, 0, 0.1611301255, 0, 0.1611, true},
		{1, 29, 0.0061132143, 0.1717552188, 0.0061130566, 0.1717589106, 0.0061, 0.1718, true},
		{29, 29, 0.8830302015, 1, 0.8830264055, 1, 0, 0, false},
		{0, 1, 0, 0.7934506856, 0, 0.7934567085, 0, 0, false},
	}
	for _, tt := range tests {
		t.Run(fmt.Sprintf("%d/%d", tt.x, tt.n), func(t *testing.T) {
			lo, hi, err := Wilson(tt.x, tt.n, Z95)
			if err != nil {
				t.Fatal(err)
			}
			near(t, "lower", lo, tt.lo, 1e-9)
			near(t, "upper", hi, tt.hi, 1e-9)
			lo, hi, _ = Wilson(tt.x, tt.n, 1.96)
			near(t, "lower at z=1.96", lo, tt.lo196, 1e-9)
			near(t, "upper at z=1.96", hi, tt.hi196, 1e-9)
			if tt.hasPublished {
				lo, hi, _ = Wilson(tt.x, tt.n, Z95)
				near(t, "lower vs published", lo, tt.pubLo, 5e-5)
				near(t, "upper vs published", hi, tt.pubHi, 5e-5)
			}
		})
	}
}

func TestWilsonExactEnds(t *testing.T) {
	for _, n := range []int{1, 2, 7, 29, 1000, 123457} {
		if lo, _, _ := Wilson(0, n, Z95); lo != 0 {
			t.Errorf("Wilson(0, %d) lower = %v, want exactly 0", n, lo)
		}
		if _, hi, _ := Wilson(n, n, Z95); hi != 1 {
			t.Errorf("Wilson(%d, %d) upper = %v, want exactly 1", n, n, hi)
		}
	}
}

// Newcombe (1998) method 10, group 1 minus group 2. Source: the shared
// reference, check 7 — own implementation of the formula, confirmed by
// statsmodels 0.13.5 confint_proportions_2indep(x1, n1, x2, n2,
// method="newcomb", compare="diff", alpha=0.05) (identical to 1e-10);
// tolerance 1e-9. "Published" is Newcombe (1998), Statistics in Medicine
// 17, 873–890, worked examples (a)–(h), method 10, 4 dp, recalled from
// memory (confirmed under either z); tolerance 5e-5.
func TestNewcombeDiff(t *testing.T) {
	tests := []struct {
		x1, n1, x2, n2 int
		d              float64
		lo, hi         float64 // z = Z95
		lo196, hi196   float64 // z = 1.96
		pubLo, pubHi   float64
	}{
		{56, 70, 48, 80, 0.2, 0.0524314724, 0.3338726540, 0.0524287134, 0.3338749349, 0.0524, 0.3339},
		{9, 10, 3, 10, 0.6, 0.1705227239, 0.8090179735, 0.1705147419, 0.8090199764, 0.1705, 0.8090},
		{6, 7, 2, 7, 0.5714285714, 0.0582279275, 0.8062496375, 0.0582193997, 0.8062514948, 0.0582, 0.8062},
		{5, 56, 0, 29, 0.0892857143, -0.0381371479, 0.1925600139, -0.0381408590, 0.1925623986, -0.0381, 0.1926},
		{0, 10, 0, 20, 0, -0.1611251581, 0.2775327999, -0.1611301255, 0.2775401688, -0.1611, 0.2775},
		{0, 10, 0, 10, 0, -0.2775327999, 0.2775327999, -0.2775401688, 0.2775401688, -0.2775, 0.2775},
		{10, 10, 0, 20, 1, 0.6790860371, 1, 0.6790771703, 1, 0.6791, 1.0000},
		{10, 10, 0, 10, 1, 0.6075093504, 1, 0.6074989292, 1, 0.6075, 1.0000},
	}
	for _, tt := range tests {
		t.Run(fmt.Sprintf("%d/%d-%d/%d", tt.x1, tt.n1, tt.x2, tt.n2), func(t *testing.T) {
			d, lo, hi, err := NewcombeDiff(tt.x1, tt.n1, tt.x2, tt.n2, Z95)
			if err != nil {
				t.Fatal(err)
			}
			near(t, "difference", d, tt.d, 1e-9)
			near(t, "lower", lo, tt.lo, 1e-9)
			near(t, "upper", hi, tt.hi, 1e-9)
			near(t, "lower vs published", lo, tt.pubLo, 5e-5)
			near(t, "upper vs published", hi, tt.pubHi, 5e-5)
			_, lo, hi, _ = NewcombeDiff(tt.x1, tt.n1, tt.x2, tt.n2, 1.96)
			near(t, "lower at z=1.96", lo, tt.lo196, 1e-9)
			near(t, "upper at z=1.96", hi, tt.hi196, 1e-9)
		})
	}
}

func TestProportionErrors(t *testing.T) {
	tests := []struct {
		name string
		x, n int
		z    float64
	}{
		{"n zero", 0, 0, Z95},
		{"n negative", 0, -3, Z95},
		{"x negative", -1, 10, Z95},
		{"x above n", 11, 10, Z95},
		{"z zero", 1, 10, 0},
		{"z NaN", 1, 10, nan()},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, _, err := Wilson(tt.x, tt.n, tt.z)
			wantInvalid(t, err)
			_, _, _, err = NewcombeDiff(5, 10, tt.x, tt.n, tt.z)
			wantInvalid(t, err)
			_, _, _, err = NewcombeDiff(tt.x, tt.n, 5, 10, tt.z)
			wantInvalid(t, err)
		})
	}
}
