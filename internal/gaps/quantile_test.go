package gaps

import (
	"encoding/csv"
	"math"
	"os"
	"strconv"
	"testing"
)

// Hyndman & Fan definition 7 against R 4.2.2
// quantile(x, probs, type = 7) (tolerance 1e-9), as listed in the project's
// reference notes: Input A is a short test vector, rivers is
// R datasets::rivers (141 river lengths in miles).
func TestQuantileAgainstR(t *testing.T) {
	inputA := []float64{3, 7, 7, 12, 14, 21, 28, 30, 45, 90}
	rivers := readColumn(t, "testdata/rivers.csv")
	if len(rivers) != 141 {
		t.Fatalf("rivers has %d values, want 141", len(rivers))
	}
	tests := []struct {
		name string
		xs   []float64
		p    float64
		want float64
	}{
		{"A p=0", inputA, 0, 3}, {"A p=.10", inputA, .10, 6.6}, {"A p=.25", inputA, .25, 8.25},
		{"A p=.50", inputA, .50, 17.5}, {"A p=.75", inputA, .75, 29.5}, {"A p=.90", inputA, .90, 49.5},
		{"A p=.95", inputA, .95, 69.75}, {"A p=1", inputA, 1, 90},
		{"rivers p=0", rivers, 0, 135}, {"rivers p=.10", rivers, .10, 255}, {"rivers p=.25", rivers, .25, 310},
		{"rivers p=.50", rivers, .50, 425}, {"rivers p=.75", rivers, .75, 680}, {"rivers p=.90", rivers, .90, 1054},
		{"rivers p=.95", rivers, .95, 1450}, {"rivers p=1", rivers, 1, 3710},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := Quantile(sortedCopy(tt.xs), tt.p); math.Abs(got-tt.want) > 1e-9 {
				t.Errorf("Quantile(%v) = %v, want %v", tt.p, got, tt.want)
			}
		})
	}
	if !math.IsNaN(Quantile(nil, .5)) {
		t.Error("Quantile of nothing is not NaN")
	}
}

func TestCeilDays(t *testing.T) {
	for x, want := range map[float64]int{49.5: 50, 49.50000000000001: 50, 41: 41, 41.000000000001: 41, 41.01: 42, 0.2: 1} {
		if got := ceilDays(x); got != want {
			t.Errorf("ceilDays(%v) = %d, want %d", x, got, want)
		}
	}
}

func readColumn(t *testing.T, path string) []float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var out []float64
	for _, r := range rows[1:] {
		v, err := strconv.ParseFloat(r[0], 64)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, v)
	}
	return out
}
