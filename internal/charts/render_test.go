package charts

import (
	"slices"
	"testing"
)

func TestLinearTicks(t *testing.T) {
	tests := []struct {
		name   string
		lo, hi float64
		want   []string
	}{
		// 364/8 = 45.5 → step 50; the axis starts at 1, the ticks at 50.
		{"days 1 to 365", 1, 365, []string{"50", "100", "150", "200", "250", "300", "350"}},
		// 371/8 = 46.4 → 50.
		{"weekly bins to 371", 0, 371, []string{"0", "50", "100", "150", "200", "250", "300", "350"}},
		// 2/8 = 0.25 → 0.5.
		{"around a single x", 44, 46, []string{"44", "44.5", "45", "45.5", "46"}},
		// 8000/8 = 1000.
		{"thousands", 0, 8000, []string{"0", "1,000", "2,000", "3,000", "4,000", "5,000", "6,000", "7,000", "8,000"}},
		{"an empty range", 3, 3, []string{"3"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var got []string
			for _, tk := range linearTicks(tt.lo, tt.hi) {
				got = append(got, tk.Label)
			}
			if !slices.Equal(got, tt.want) {
				t.Errorf("linearTicks(%v, %v) = %q, want %q", tt.lo, tt.hi, got, tt.want)
			}
		})
	}
}

func TestLogTicks(t *testing.T) {
	tests := []struct {
		name   string
		lo, hi float64
		values []float64
		labels []string // "" for a minor tick
	}{
		{"1 to 16", 1, 16, []float64{1, 2, 5, 10}, []string{"1", "2", "5", "10"}},
		// BinDays' logarithmic edges to 365 end at 2^(35/4) = 430.5.
		{"1 to 430.5", 1, 430.5,
			[]float64{1, 2, 5, 10, 20, 50, 100, 200},
			[]string{"1", "2", "5", "10", "20", "50", "100", "200"}},
		// 13 ticks are too many: only the powers of ten keep labels.
		{"1 to 10,000", 1, 10000,
			[]float64{1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10000},
			[]string{"1", "", "", "10", "", "", "100", "", "", "1,000", "", "", "10,000"}},
		{"below 1", 0.5, 3, []float64{0.5, 1, 2}, []string{"0.5", "1", "2"}},
		{"not positive", 0, 3, nil, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var values []float64
			var labels []string
			for _, tk := range logTicks(tt.lo, tt.hi) {
				values = append(values, tk.Value)
				labels = append(labels, tk.Label)
			}
			if !slices.Equal(values, tt.values) || !slices.Equal(labels, tt.labels) {
				t.Errorf("logTicks(%v, %v) = %v %q, want %v %q", tt.lo, tt.hi, values, labels, tt.values, tt.labels)
			}
		})
	}
}

func TestFormatPercent(t *testing.T) {
	tests := []struct {
		name     string
		v        float64
		decimals int
		want     string
	}{
		{"zero", 0, 0, "0%"},
		{"a quarter", 0.25, 0, "25%"},
		{"one decimal", 0.625, 1, "62.5%"},
		{"whole with decimals asked", 0.07, 1, "7%"}, // 0.07·100 = 7.000000000000001
		{"rounded", 0.12345, 1, "12.3%"},
		{"all", 1, 1, "100%"},
		{"over 100", 12.5, 0, "1,250%"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := formatPercent(tt.v, tt.decimals); got != tt.want {
				t.Errorf("formatPercent(%v, %d) = %q, want %q", tt.v, tt.decimals, got, tt.want)
			}
		})
	}
}
