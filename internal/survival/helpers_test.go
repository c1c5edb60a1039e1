package survival

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// table is a CSV file from testdata: its header and rows, quotes removed.
type table struct {
	col  map[string]int
	rows [][]string
}

func mustReadCSV(t *testing.T, name string) table {
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
		t.Fatalf("%s has no data rows", name)
	}
	tb := table{col: map[string]int{}, rows: recs[1:]}
	for i, h := range recs[0] {
		tb.col[h] = i
	}
	return tb
}

func (tb table) get(t *testing.T, row []string, name string) string {
	t.Helper()
	i, ok := tb.col[name]
	if !ok {
		t.Fatalf("no column %q", name)
	}
	return row[i]
}

// num parses a number as R writes it; NA and NaN become NaN.
func (tb table) num(t *testing.T, row []string, name string) float64 {
	t.Helper()
	s := tb.get(t, row, name)
	if s == "NA" || s == "NaN" {
		return math.NaN()
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("column %s: %v", name, err)
	}
	return v
}

func (tb table) int(t *testing.T, row []string, name string) int {
	t.Helper()
	v, err := strconv.Atoi(tb.get(t, row, name))
	if err != nil {
		t.Fatalf("column %s: %v", name, err)
	}
	return v
}

// dataset names a data file in testdata and its columns.
type dataset struct {
	file, time, event, group string // group "" for one sample
}

var datasets = map[string]dataset{
	"aml":     {"aml.csv", "time", "status", "x"},
	"gehan":   {"gehan.csv", "time", "cens", "treat"},
	"lung":    {"lung.csv", "time", "event", ""},
	"veteran": {"veteran.csv", "time", "status", "trt"},
	"days":    {"days_synthetic.csv", "time", "event", ""},
}

// mustEpisodes returns the times and event flags of one stratum of a data
// set ("all" when it has no groups). Event columns hold 1 (event) or 0.
func mustEpisodes(t *testing.T, name, stratum string) ([]float64, []bool) {
	t.Helper()
	ds, ok := datasets[name]
	if !ok {
		t.Fatalf("unknown data set %q", name)
	}
	tb := mustReadCSV(t, ds.file)
	var times []float64
	var events []bool
	for _, r := range tb.rows {
		if ds.group != "" && tb.get(t, r, ds.group) != stratum {
			continue
		}
		times = append(times, tb.num(t, r, ds.time))
		switch e := tb.get(t, r, ds.event); e {
		case "1":
			events = append(events, true)
		case "0":
			events = append(events, false)
		default:
			t.Fatalf("%s: event value %q", ds.file, e)
		}
	}
	if len(times) == 0 {
		t.Fatalf("%s: no rows in stratum %q", name, stratum)
	}
	return times, events
}

func mustCurve(t *testing.T, times []float64, events []bool) *Curve {
	t.Helper()
	c, err := KaplanMeier(times, events)
	if err != nil {
		t.Fatalf("KaplanMeier: %v", err)
	}
	return c
}

// builders are the three ways to build a curve; each test of a value runs
// through all of them.
var builders = []struct {
	name  string
	build func(t *testing.T, times []float64, events []bool) *Curve
}{
	{"KaplanMeier", mustCurve},
	{"KaplanMeierDays", func(t *testing.T, times []float64, events []bool) *Curve {
		t.Helper()
		c, err := KaplanMeierDays(mustDays(t, times), events)
		if err != nil {
			t.Fatalf("KaplanMeierDays: %v", err)
		}
		return c
	}},
	{"Builder", func(t *testing.T, times []float64, events []bool) *Curve {
		t.Helper()
		var b Builder
		for i, d := range mustDays(t, times) {
			if err := b.Add(int(d), events[i]); err != nil {
				t.Fatalf("Builder.Add: %v", err)
			}
		}
		return b.Curve()
	}},
}

func mustDays(t *testing.T, times []float64) []int32 {
	t.Helper()
	days := make([]int32, len(times))
	for i, v := range times {
		if v != math.Trunc(v) {
			t.Fatalf("time %v is not a whole number", v)
		}
		days[i] = int32(v)
	}
	return days
}

// near reports whether got is within tol of want, treating two NaNs as
// equal (R's NA and NaN both mean "undefined").
func near(got, want, tol float64) bool {
	if math.IsNaN(want) || math.IsNaN(got) {
		return math.IsNaN(want) && math.IsNaN(got)
	}
	return math.Abs(got-want) <= tol
}

func parseConf(t *testing.T, s string) ConfType {
	t.Helper()
	for _, ct := range []ConfType{ConfLog, ConfLogLog, ConfPlain} {
		if ct.String() == s {
			return ct
		}
	}
	t.Fatalf("unknown conf type %q", s)
	return 0
}

// key joins the parts of a group name.
func key(parts ...string) string { return strings.Join(parts, "/") }
