package civil

import (
	"testing"
	"time"
)

// The conversions are checked against the standard library's calendar
// (time.Date / Time.Unix), day by day over 1600–2400.
func TestRoundTripAgainstTimePackage(t *testing.T) {
	start := time.Date(1600, 1, 1, 0, 0, 0, 0, time.UTC)
	end := time.Date(2400, 12, 31, 0, 0, 0, 0, time.UTC)
	for tm := start; !tm.After(end); tm = tm.AddDate(0, 0, 1) {
		want := Date(tm.Unix() / 86400)
		y, m, d := tm.Date()
		got := FromYMD(y, int(m), d)
		if got != want {
			t.Fatalf("FromYMD(%d,%d,%d) = %d, want %d", y, m, d, got, want)
		}
		gy, gm, gd := got.YMD()
		if gy != y || gm != int(m) || gd != d {
			t.Fatalf("YMD(%d) = %d-%d-%d, want %v", got, gy, gm, gd, tm)
		}
		if got.Weekday() != tm.Weekday() {
			t.Fatalf("Weekday(%v) = %v, want %v", tm, got.Weekday(), tm.Weekday())
		}
	}
}

func TestParse(t *testing.T) {
	tests := []struct {
		in   string
		want string
		ok   bool
	}{
		{"2024-02-29", "2024-02-29", true},
		{"2023-02-29", "", false},
		{"1900-02-29", "", false},
		{"2000-02-29", "2000-02-29", true},
		{"2024-13-01", "", false},
		{"2024-1-01", "", false},
		{"24-01-01", "", false},
		{"2024-01-0x", "", false},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			d, err := Parse(tt.in)
			if (err == nil) != tt.ok {
				t.Fatalf("Parse(%q) error = %v, want ok=%v", tt.in, err, tt.ok)
			}
			if tt.ok && d.String() != tt.want {
				t.Errorf("Parse(%q) = %s, want %s", tt.in, d, tt.want)
			}
		})
	}
}
