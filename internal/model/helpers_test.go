package model

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"ebb/internal/frame"
)

// readCSV reads testdata/name into a header and rows of fields.
func readCSV(t testing.TB, name string) ([]string, [][]string) {
	t.Helper()
	fh, err := os.Open(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { fh.Close() })
	recs, err := csv.NewReader(fh).ReadAll()
	if err != nil {
		t.Fatalf("read %s: %v", name, err)
	}
	return recs[0], recs[1:]
}

// loadFrame reads the named feature columns and a 0/1 label column of a
// testdata CSV into a frame.
func loadFrame(t testing.TB, name string, features []string, label string) *frame.Frame {
	t.Helper()
	head, rows := readCSV(t, name)
	pos := make(map[string]int)
	for j, h := range head {
		pos[h] = j
	}
	f, err := frame.New(features, len(rows))
	if err != nil {
		t.Fatal(err)
	}
	li, ok := pos[label]
	if !ok {
		t.Fatalf("%s: no column %q", name, label)
	}
	for j, feat := range features {
		c, ok := pos[feat]
		if !ok {
			t.Fatalf("%s: no column %q", name, feat)
		}
		col := f.ColAt(j)
		for i, r := range rows {
			col[i] = parse(t, r[c])
		}
	}
	for i, r := range rows {
		f.Labels()[i] = uint8(parse(t, r[li]))
		f.Customers()[i] = int32(i)
	}
	return f
}

func parse(t testing.TB, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("parse %q: %v", s, err)
	}
	return v
}

func near(got, want, tol float64) bool { return math.Abs(got-want) <= tol }

func nearRel(got, want, tol float64) bool { return math.Abs(got-want) <= tol*math.Abs(want) }
