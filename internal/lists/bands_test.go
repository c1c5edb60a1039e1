package lists

import (
	"math"
	"testing"

	"ebb/internal/problem"
)

func TestBandsOf(t *testing.T) {
	b := DefaultBands
	tests := []struct {
		name string
		p    float64
		want Band
	}{
		{"zero", 0, Low},
		{"just below medium", 0.3999999, Low},
		{"medium edge", 0.4, Medium},
		{"just below high", 0.6999999, Medium},
		{"high edge", 0.7, High},
		{"one", 1, High},
		{"NaN", math.NaN(), Low},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := b.Of(tt.p); got != tt.want {
				t.Errorf("Of(%v) = %q, want %q", tt.p, got, tt.want)
			}
		})
	}
}

func TestBandsValidate(t *testing.T) {
	tests := []struct {
		name string
		b    Bands
		ok   bool
	}{
		{"default", DefaultBands, true},
		{"close", Bands{High: 0.51, Medium: 0.5}, true},
		{"equal", Bands{High: 0.5, Medium: 0.5}, false},
		{"swapped", Bands{High: 0.4, Medium: 0.7}, false},
		{"medium zero", Bands{High: 0.7, Medium: 0}, false},
		{"high one", Bands{High: 1, Medium: 0.4}, false},
		{"NaN", Bands{High: math.NaN(), Medium: 0.4}, false},
		{"zero value", Bands{}, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := tt.b.Validate()
			if (err == nil) != tt.ok {
				t.Fatalf("Validate(%+v) = %v, want ok=%v", tt.b, err, tt.ok)
			}
			if err != nil && !problem.Is(err, problem.Invalid) {
				t.Errorf("Validate(%+v) = %v, want a problem.Invalid", tt.b, err)
			}
		})
	}
}
