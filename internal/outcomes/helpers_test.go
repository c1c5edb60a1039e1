package outcomes

import (
	"bufio"
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

// mustReadColumn reads a one-column CSV from testdata: a header line, then
// one number per line.
func mustReadColumn(t *testing.T, name string) []float64 {
	t.Helper()
	f, err := os.Open("testdata/" + name)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { f.Close() })
	sc := bufio.NewScanner(f)
	sc.Scan() // header
	var out []float64
	for sc.Scan() {
		v, err := strconv.ParseFloat(sc.Text(), 64)
		if err != nil {
			t.Fatalf("%s line %d: %v", name, len(out)+2, err)
		}
		out = append(out, v)
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

func nan() float64 { return math.NaN() }
