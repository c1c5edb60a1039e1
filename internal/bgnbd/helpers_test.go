package bgnbd

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// readCSV returns the rows of testdata/name after the header, each as a map
// from column name to value.
func readCSV(t *testing.T, name string) []map[string]float64 {
	t.Helper()
	f, err := os.Open(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { f.Close() })
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("read %s: %v", name, err)
	}
	if len(recs) < 2 {
		t.Fatalf("%s: no rows", name)
	}
	var out []map[string]float64
	for i, rec := range recs[1:] {
		row := map[string]float64{}
		for j, h := range recs[0] {
			v, err := strconv.ParseFloat(rec[j], 64)
			if err != nil {
				// Text columns (names) are kept out of the map.
				if h == "name" {
					continue
				}
				t.Fatalf("%s line %d column %s: %v", name, i+2, h, err)
			}
			row[h] = v
		}
		out = append(out, row)
	}
	return out
}

// scalars reads a name,value CSV into a map.
func scalars(t *testing.T, name string) map[string]float64 {
	t.Helper()
	f, err := os.Open(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { f.Close() })
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("read %s: %v", name, err)
	}
	out := map[string]float64{}
	for i, rec := range recs[1:] {
		v, err := strconv.ParseFloat(rec[1], 64)
		if err != nil {
			t.Fatalf("%s line %d: %v", name, i+2, err)
		}
		out[rec[0]] = v
	}
	return out
}

// cdnowParams are the published CDNOW estimates as copied into
// testdata/cdnow_scalars.csv (from memory, per the shared reference).
func cdnowParams(t *testing.T) Params {
	t.Helper()
	s := scalars(t, "cdnow_scalars.csv")
	return Params{R: s["r"], Alpha: s["alpha"], A: s["a"], B: s["b"]}
}
