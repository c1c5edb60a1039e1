package lists

import (
	"math"
	"strconv"
	"testing"
	"time"

	"ebb/internal/civil"
	"ebb/internal/problem"
)

var testSalt = []byte("ebb-test-salt-0123456789")

func TestPeriodOriginIsMonday(t *testing.T) {
	if want := civil.FromYMD(2001, 1, 1); periodOrigin != want {
		t.Fatalf("periodOrigin = %v, want %v", periodOrigin, want)
	}
	if wd := periodOrigin.Weekday(); wd != time.Monday {
		t.Errorf("periodOrigin is a %v, want Monday", wd)
	}
}

func TestPeriodDays(t *testing.T) {
	tests := []struct{ horizon, want int }{
		{-5, 7}, {0, 7}, {1, 7}, {7, 7}, {8, 14}, {14, 14}, {30, 35}, {90, 91}, {91, 91}, {92, 98}, {365, 371},
	}
	for _, tt := range tests {
		t.Run(strconv.Itoa(tt.horizon), func(t *testing.T) {
			if got := PeriodDays(tt.horizon); got != tt.want {
				t.Errorf("PeriodDays(%d) = %d, want %d", tt.horizon, got, tt.want)
			}
		})
	}
}

func TestPeriod(t *testing.T) {
	h := Holdout{PeriodDays: 91}
	o := periodOrigin
	tests := []struct {
		name string
		d    civil.Date
		want int
	}{
		{"origin", o, 0},
		{"last day of period 0", o + 90, 0},
		{"first day of period 1", o + 91, 1},
		{"day before origin", o - 1, -1},
		{"first day of period -1", o - 91, -1},
		{"last day of period -2", o - 92, -2},
		{"before 1970", civil.FromYMD(1969, 12, 31), -125}, // ⌊(−1 − 11323) / 91⌋ = ⌊−124.4⌋
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := h.Period(tt.d); got != tt.want {
				t.Errorf("Period(%v) = %d, want %d", tt.d, got, tt.want)
			}
		})
	}
}

// Every day lies between the start and end of its period, and with
// whole-week periods every period starts on a Monday.
func TestPeriodStartEnd(t *testing.T) {
	for _, days := range []int{1, 7, 91, 371} {
		h := Holdout{PeriodDays: days}
		for d := civil.FromYMD(1995, 1, 1); d < civil.FromYMD(2030, 1, 1); d += 3 {
			p := h.Period(d)
			start, end := h.PeriodStart(p), h.PeriodEnd(p)
			if d < start || d > end || int(end-start) != days-1 {
				t.Fatalf("PeriodDays %d: day %v in period %d of %v..%v", days, d, p, start, end)
			}
			if days%7 == 0 && start.Weekday() != time.Monday {
				t.Fatalf("PeriodDays %d: period %d starts on a %v", days, p, start.Weekday())
			}
		}
	}
}

func TestHoldoutValidate(t *testing.T) {
	tests := []struct {
		name string
		h    Holdout
		ok   bool
	}{
		{"default", Holdout{Salt: testSalt, Share: 0.1, PeriodDays: 91}, true},
		{"no holdout", Holdout{Salt: testSalt, Share: 0, PeriodDays: 7}, true},
		{"half", Holdout{Salt: testSalt, Share: 0.5, PeriodDays: 7}, true},
		{"share too big", Holdout{Salt: testSalt, Share: 0.51, PeriodDays: 7}, false},
		{"negative share", Holdout{Salt: testSalt, Share: -0.1, PeriodDays: 7}, false},
		{"NaN share", Holdout{Salt: testSalt, Share: math.NaN(), PeriodDays: 7}, false},
		{"no period", Holdout{Salt: testSalt, Share: 0.1}, false},
		{"short salt", Holdout{Salt: testSalt[:15], Share: 0.1, PeriodDays: 7}, false},
		{"no salt", Holdout{Share: 0.1, PeriodDays: 7}, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := tt.h.Validate()
			if (err == nil) != tt.ok {
				t.Fatalf("Validate() = %v, want ok=%v", err, tt.ok)
			}
			if err != nil && !problem.Is(err, problem.Invalid) {
				t.Errorf("Validate() = %v, want a problem.Invalid", err)
			}
		})
	}
}

// The documented hash, checked against an independent implementation:
// x is the first 8 digest bytes, big-endian, of HMAC-SHA256 keyed with
// testSalt over len(key) (uint64 BE) ‖ key ‖ period (int64 BE), computed
// with Python 3.11.7's hmac and hashlib modules (exact integers). A share
// just above x/2^64 puts the customer in, a share at or just below it out.
func TestHoldoutHashReference(t *testing.T) {
	tests := []struct {
		key    string
		period int
		x      uint64
	}{
		{"c-1", 5, 1230598454410413744},
		{"customer@example.com", -3, 9850303624959416453},
		{"", 0, 11877929638125952968},
	}
	for _, tt := range tests {
		t.Run(tt.key, func(t *testing.T) {
			below := float64(tt.x>>11) * 0x1p-53 // ≤ x/2^64
			above := float64(tt.x>>11+1) * 0x1p-53
			h := Holdout{Salt: testSalt, PeriodDays: 7}
			h.Share = below
			if h.In(tt.key, tt.period) {
				t.Errorf("In(%q, %d) with Share %v = true, want false", tt.key, tt.period, below)
			}
			h.Share = above
			if !h.In(tt.key, tt.period) {
				t.Errorf("In(%q, %d) with Share %v = false, want true", tt.key, tt.period, above)
			}
		})
	}
}

func TestHoldoutDeterministic(t *testing.T) {
	h := Holdout{Salt: testSalt, Share: 0.3, PeriodDays: 91}
	members := h.Members(12)
	for i := range 2000 {
		key := "c-" + strconv.Itoa(i)
		a, b, c := h.In(key, 12), h.In(key, 12), members(key)
		if a != b || a != c {
			t.Fatalf("key %q: In = %v then %v, Members = %v", key, a, b, c)
		}
	}
}

// memberCount counts the keys "c-0" … "c-(n−1)" in the holdout of period.
func memberCount(h Holdout, period, n int) int {
	in := h.Members(period)
	count := 0
	for i := range n {
		if in("c-" + strconv.Itoa(i)) {
			count++
		}
	}
	return count
}

// withinBinomial fails unless count is within 4 standard deviations of a
// Binomial(n, p) mean.
func withinBinomial(t *testing.T, what string, count, n int, p float64) {
	t.Helper()
	mean := float64(n) * p
	sd := math.Sqrt(float64(n) * p * (1 - p))
	if math.Abs(float64(count)-mean) > 4*sd {
		t.Errorf("%s: %d of %d, want %.0f ± %.0f (4 SD of Binomial(%d, %g))", what, count, n, mean, 4*sd, n, p)
	}
}

func TestHoldoutShare(t *testing.T) {
	const n = 200_000
	for _, share := range []float64{0.01, 0.1, 0.25, 0.5} {
		t.Run(strconv.FormatFloat(share, 'g', -1, 64), func(t *testing.T) {
			h := Holdout{Salt: testSalt, Share: share, PeriodDays: 91}
			withinBinomial(t, "holdout members", memberCount(h, 40, n), n, share)
		})
	}
}

func TestHoldoutShareZeroIsNobody(t *testing.T) {
	h := Holdout{Salt: testSalt, Share: 0, PeriodDays: 91}
	if got := memberCount(h, 40, 200_000); got != 0 {
		t.Errorf("Share 0: %d members, want 0", got)
	}
}

// Memberships in two periods, or under two salts, are independent: the
// customers in both number about n·share².
func TestHoldoutIndependence(t *testing.T) {
	const n, share = 200_000, 0.1
	other := []byte("another-dataset-salt-xyz")
	tests := []struct {
		name string
		a, b func(key string) bool
	}{
		{"next period", Holdout{Salt: testSalt, Share: share}.Members(40), Holdout{Salt: testSalt, Share: share}.Members(41)},
		{"negative period", Holdout{Salt: testSalt, Share: share}.Members(-1), Holdout{Salt: testSalt, Share: share}.Members(1)},
		{"other salt", Holdout{Salt: testSalt, Share: share}.Members(40), Holdout{Salt: other, Share: share}.Members(40)},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			both := 0
			for i := range n {
				key := "c-" + strconv.Itoa(i)
				if tt.a(key) && tt.b(key) {
					both++
				}
			}
			withinBinomial(t, "in both", both, n, share*share)
		})
	}
}
