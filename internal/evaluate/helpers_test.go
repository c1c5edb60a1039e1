package evaluate

import (
	"encoding/csv"
	"math"
	"os"
	"strconv"
	"testing"

	"ebb/internal/problem"
)

// near fails unless got is within tol of want.
func near(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if math.IsNaN(got) || math.Abs(got-want) > tol {
		t.Errorf("%s = %.15g, want %.15g (tolerance %g)", name, got, want, tol)
	}
}

// wantInvalid fails unless err is a problem.Invalid with a message.
func wantInvalid(t *testing.T, err error) {
	t.Helper()
	p := problem.As(err)
	if p == nil || p.Kind != problem.Invalid || p.Message == "" {
		t.Fatalf("err = %v, want a problem.Invalid with a message", err)
	}
}

// labelsOf turns 0/1 into labels.
func labelsOf(ys ...int) []bool {
	out := make([]bool, len(ys))
	for i, y := range ys {
		out[i] = y == 1
	}
	return out
}

// exampleB is the ten-item example of shared reference check 4.
func exampleB() ([]float64, []bool) {
	return []float64{0.9, 0.8, 0.8, 0.7, 0.6, 0.5, 0.5, 0.3, 0.2, 0.1},
		labelsOf(1, 0, 1, 1, 0, 0, 1, 0, 0, 0)
}

// hanleyMcNeil expands Hanley & McNeil (1982) Table 1 into rows: score =
// rating 1..5, label 1 = truly abnormal.
func hanleyMcNeil() ([]float64, []bool) {
	normal := []int{33, 6, 6, 11, 2}
	abnormal := []int{3, 2, 2, 11, 33}
	var s []float64
	var y []bool
	for r := range 5 {
		for range normal[r] {
			s, y = append(s, float64(r+1)), append(y, false)
		}
		for range abnormal[r] {
			s, y = append(s, float64(r+1)), append(y, true)
		}
	}
	return s, y
}

// breastCancer reads testdata/breast_cancer_scores.csv: the named column
// as scores, malignant as labels.
func breastCancer(t testing.TB, column string) ([]float64, []bool) {
	t.Helper()
	f, err := os.Open("testdata/breast_cancer_scores.csv")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { f.Close() })
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col, lab := -1, -1
	for i, h := range recs[0] {
		switch h {
		case column:
			col = i
		case "malignant":
			lab = i
		}
	}
	if col < 0 || lab < 0 {
		t.Fatalf("column %q or malignant missing", column)
	}
	var s []float64
	var y []bool
	for _, r := range recs[1:] {
		v, err := strconv.ParseFloat(r[col], 64)
		if err != nil {
			t.Fatal(err)
		}
		s, y = append(s, v), append(y, r[lab] == "1")
	}
	return s, y
}
