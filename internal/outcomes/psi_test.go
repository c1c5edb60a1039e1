package outcomes

import (
	"math"
	"slices"
	"testing"
)

// PSI examples A and B of the project's shared reference, check 8: hand
// formula evaluated in numpy, confirmed with scipy 1.10.1
// entropy(a, e) + entropy(e, a) and special.rel_entr (identical to 1e-15);
// tolerance 1e-12. Example B is given as shares; counts out of 100 give
// the same shares. The extra zero bins at the end are the "missing" bin
// of Counts, empty on both sides, which smoothing leaves at 0.
func TestPSIReferenceExamples(t *testing.T) {
	tests := []struct {
		name             string
		expected, actual []int
		want             float64
	}{
		{"A: ten equal reference bins",
			[]int{100, 100, 100, 100, 100, 100, 100, 100, 100, 100, 0},
			[]int{80, 90, 95, 100, 105, 110, 110, 105, 100, 105, 0},
			0.008410998713428},
		{"B: five bins",
			[]int{10, 20, 40, 20, 10, 0},
			[]int{5, 15, 35, 25, 20, 0},
			0.136189927903517},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := PSI(tt.expected, tt.actual, Epsilon)
			if err != nil {
				t.Fatal(err)
			}
			near(t, "PSI", got, tt.want, 1e-12)
		})
	}
}

// Example C of the shared reference, check 8: breast_cancer.csv column
// mean_radius (sklearn load_breast_cancer, copied to
// testdata/mean_radius.csv), reference = rows 1–400, current = rows
// 401–569, definition-7 deciles of the reference, right-closed bins.
// Source: numpy 1.24.2 (psi.py), confirmed with scipy 1.10.1; edges 1e-9,
// PSI 1e-12. (Left-closed bins would give 0.071130390059988: three
// reference values equal the edge 12.18.)
func TestPSIBreastCancerMeanRadius(t *testing.T) {
	radius := mustReadColumn(t, "mean_radius.csv")
	if len(radius) != 569 {
		t.Fatalf("mean_radius.csv has %d values, want 569", len(radius))
	}
	ref, cur := radius[:400], radius[400:]
	edges := Edges(ref)
	wantEdges := []float64{10.489, 11.446, 12.18, 12.848, 13.495, 14.368, 15.469, 17.428, 19.554}
	if len(edges) != len(wantEdges) {
		t.Fatalf("Edges = %v, want %v", edges, wantEdges)
	}
	for i := range edges {
		near(t, "edge", edges[i], wantEdges[i], 1e-9)
	}
	e, a := Counts(ref, edges), Counts(cur, edges)
	if want := []int{40, 40, 42, 38, 40, 40, 40, 40, 40, 40, 0}; !slices.Equal(e, want) {
		t.Errorf("Counts(reference) = %v, want %v", e, want)
	}
	if want := []int{23, 17, 21, 18, 17, 18, 21, 9, 11, 14, 0}; !slices.Equal(a, want) {
		t.Errorf("Counts(current) = %v, want %v", a, want)
	}
	got, err := PSI(e, a, Epsilon)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "PSI", got, 0.069046348314143, 1e-12)
	if b := Band(got); b != Stable {
		t.Errorf("Band(%v) = %q, want %q", got, b, Stable)
	}
}

func TestEdges(t *testing.T) {
	tests := []struct {
		name string
		ref  []float64
		want []float64
	}{
		{"none", nil, nil},
		{"only NaN", []float64{nan(), nan()}, nil},
		{"one value", []float64{4}, []float64{4}},
		// Input A of the shared reference, check 1 (6.6 at 0.1, 17.5 at
		// 0.5, 49.5 at 0.9); all nine from R 4.2.2
		// quantile(c(3,7,7,12,14,21,28,30,45,90), probs = 1:9/10, type = 7).
		{"reference input A", []float64{90, 3, 7, 7, 12, 14, 21, 28, 30, 45},
			[]float64{6.6, 7, 10.5, 13.2, 17.5, 23.8, 28.6, 33, 49.5}},
		// R: quantile(c(1,1,1,1,1,1,1,1,2,3,5), probs = 1:9/10) is 1 seven
		// times, then 2 and 3.
		{"ties merge", []float64{1, 1, 1, 1, 1, 1, 1, 1, 2, 3, 5},
			[]float64{1, 2, 3}},
		{"NaN ignored", []float64{nan(), 1, 2, nan(), 3}, []float64{1.2, 1.4, 1.6, 1.8, 2, 2.2, 2.4, 2.6, 2.8}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := Edges(tt.ref)
			if len(got) != len(tt.want) {
				t.Fatalf("Edges(%v) = %v, want %v", tt.ref, got, tt.want)
			}
			for i := range got {
				near(t, "edge", got[i], tt.want[i], 1e-12)
			}
		})
	}
}

func TestCounts(t *testing.T) {
	edges := []float64{1, 2, 3}
	values := []float64{0, 1, 1.5, 2, 2, 3, 3.1, math.Inf(1), math.Inf(-1), nan()}
	// (−∞,1]: 0, 1, −∞; (1,2]: 1.5, 2, 2; (2,3]: 3; (3,∞): 3.1, +∞; missing: NaN.
	want := []int{3, 3, 1, 2, 1}
	if got := Counts(values, edges); !slices.Equal(got, want) {
		t.Errorf("Counts = %v, want %v", got, want)
	}
	if got := Counts(nil, nil); !slices.Equal(got, []int{0, 0}) {
		t.Errorf("Counts(nil, nil) = %v, want [0 0]", got)
	}
}

// The smoothing rule worked by hand: expected shares 0.5, 0.5, 0 become
// 0.5, 0.5, 0.0001; actual shares 0.5, 0.4, 0.1 stay. PSI = 0 +
// (0.4 − 0.5)·ln(0.4/0.5) + (0.1 − 0.0001)·ln(0.1/0.0001).
func TestPSISmoothing(t *testing.T) {
	want := -0.1*math.Log(0.8) + (0.1-0.0001)*math.Log(1000)
	got, err := PSI([]int{50, 50, 0, 0}, []int{50, 40, 10, 0}, Epsilon)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "PSI", got, want, 1e-12)
	same, _ := PSI([]int{3, 0, 7}, []int{30, 0, 70}, Epsilon)
	near(t, "PSI of equal shares", same, 0, 1e-15)
}

func TestPSIErrors(t *testing.T) {
	tests := []struct {
		name             string
		expected, actual []int
		eps              float64
	}{
		{"negative count", []int{5, -1}, []int{3, 3}, Epsilon},
		{"empty reference", []int{0, 0}, []int{3, 3}, Epsilon},
		{"empty current", []int{3, 3}, []int{0, 0}, Epsilon},
		{"eps zero", []int{3, 3}, []int{3, 3}, 0},
		{"eps one", []int{3, 3}, []int{3, 3}, 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := PSI(tt.expected, tt.actual, tt.eps)
			wantInvalid(t, err)
		})
	}
	defer func() {
		if recover() == nil {
			t.Error("PSI with bins of different lengths did not panic")
		}
	}()
	PSI([]int{1, 2}, []int{1, 2, 3}, Epsilon)
}

// The bands are a rule of thumb (common practice in credit scoring, e.g.
// Siddiqi 2006, recalled from memory in the shared reference, check 8),
// not a computed value: these cases only pin the boundaries ebb chose.
func TestBand(t *testing.T) {
	tests := []struct {
		psi  float64
		want Stability
	}{
		{0, Stable}, {0.0999, Stable}, {0.1, Watch}, {0.2, Watch}, {0.25, Watch},
		{0.2501, Investigate}, {3, Investigate}, {nan(), Investigate},
	}
	for _, tt := range tests {
		if got := Band(tt.psi); got != tt.want {
			t.Errorf("Band(%v) = %q, want %q", tt.psi, got, tt.want)
		}
	}
}
