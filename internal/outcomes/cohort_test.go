package outcomes

import (
	"testing"

	"ebb/internal/civil"
)

func day(s string) civil.Date {
	d, err := civil.Parse(s)
	if err != nil {
		panic(err)
	}
	return d
}

func days(ss ...string) []civil.Date {
	out := make([]civil.Date, len(ss))
	for i, s := range ss {
		out[i] = day(s)
	}
	return out
}

// cohortCustomers is the hand-worked set of TestCohortTable (X = 30).
func cohortCustomers() [][]civil.Date {
	return [][]civil.Date{
		days("2024-01-05", "2024-01-20", "2024-02-25"), // c1
		days("2024-01-10"),                             // c2
		days("2024-01-31", "2024-03-15"),               // c3
		days("2024-02-01", "2024-02-29", "2024-03-25"), // c4: the last day is after data_through
		days("2024-03-01"),                             // c5
		days("2024-04-02"),                             // c6: only after data_through, in no cohort
		nil,                                            // c7: no orders
		days("2024-02-10"),                             // c8
	}
}

type wantPoint struct {
	at     string
	active int
}

// TestCohortTable, worked by hand with X = 30 and data_through 2024-03-20
// (not a month end, so it is the last point). Active at m means an order
// day in (m − 30, m].
//
//	January (c1, c2, c3):
//	  01-31, window (01-01, 01-31]: c1 (01-20), c2 (01-10), c3 (01-31): 3
//	  02-29, window (01-30, 02-29]: c1 (02-25), c3 (01-31): 2
//	  03-20, window (02-19, 03-20]: c1 (02-25), c3 (03-15): 2
//	  lapse: c1 last 02-25 + 30 = 03-26 > 03-20, censored at 75 days
//	  (01-05 → 03-20); c2 01-10 + 30 = 02-09, event at 30; c3 last
//	  03-15, censored at 49 (01-31 → 03-20). KM: one step at 30, S = 2/3.
//	February (c4 without its 03-25 order, c8):
//	  02-29, window (01-30, 02-29]: c4 (02-29), c8 (02-10): 2
//	  03-20, window (02-19, 03-20]: c4 (02-29): 1
//	  lapse: c4 03-30 > 03-20, censored at 48; c8 03-11, event at 30.
//	  KM: one step at 30, S = 1/2.
//	March (c5): 03-20: 1 active; censored at 19, no step.
func TestCohortTable(t *testing.T) {
	got := CohortTable(cohortCustomers(), 30, day("2024-03-20"))
	want := []struct {
		month  string
		size   int
		points []wantPoint
		steps  [][2]float64 // time, S
		times  float64      // the largest observed time
	}{
		{"2024-01", 3, []wantPoint{{"2024-01-31", 3}, {"2024-02-29", 2}, {"2024-03-20", 2}}, [][2]float64{{30, 2.0 / 3}}, 75},
		{"2024-02", 2, []wantPoint{{"2024-02-29", 2}, {"2024-03-20", 1}}, [][2]float64{{30, 0.5}}, 48},
		{"2024-03", 1, []wantPoint{{"2024-03-20", 1}}, nil, 19},
	}
	if len(got) != len(want) {
		t.Fatalf("CohortTable gave %d cohorts, want %d: %+v", len(got), len(want), got)
	}
	for i, w := range want {
		c := got[i]
		t.Run(w.month, func(t *testing.T) {
			if c.Month != w.month || c.Size != w.size {
				t.Errorf("cohort = %s of %d, want %s of %d", c.Month, c.Size, w.month, w.size)
			}
			checkRetention(t, c, w.points)
			rows := c.Lapse.Rows()
			if len(rows) != len(w.steps) {
				t.Fatalf("Lapse has %d steps, want %d", len(rows), len(w.steps))
			}
			for j, s := range w.steps {
				if rows[j].Time != s[0] {
					t.Errorf("step %d at %v days, want %v", j, rows[j].Time, s[0])
				}
				near(t, "S", rows[j].Surv, s[1], 1e-12)
				if !(rows[j].Lower <= rows[j].Surv && rows[j].Surv <= rows[j].Upper) {
					t.Errorf("step %d: band %v–%v does not hold S = %v", j, rows[j].Lower, rows[j].Upper, rows[j].Surv)
				}
			}
			if c.Lapse.N() != w.size || c.Lapse.MaxTime() != w.times {
				t.Errorf("Lapse has %d customers up to %v days, want %d up to %v", c.Lapse.N(), c.Lapse.MaxTime(), w.size, w.times)
			}
			if !c.Small || c.Note == "" {
				t.Errorf("Small, Note = %v, %q; want a flagged small cohort", c.Small, c.Note)
			}
		})
	}
	if note := "Only 3 customers placed a first order in January 2024; with fewer than 20 (a rule of thumb), one customer moves this cohort's figures by several points."; got[0].Note != note {
		t.Errorf("Note =\n%q\nwant\n%q", got[0].Note, note)
	}
}

// With data_through on a month end, that month end is the last point and
// later orders are ignored. January, data_through 2024-02-29: c1 is
// censored at 55 days (01-05 → 02-29), c2 lapses at 30, c3 (last order
// 01-31, lapse 03-01) is censored at 29.
func TestCohortTableMonthEnd(t *testing.T) {
	got := CohortTable(cohortCustomers(), 30, day("2024-02-29"))
	if len(got) != 2 {
		t.Fatalf("CohortTable gave %d cohorts, want 2 (January, February)", len(got))
	}
	checkRetention(t, got[0], []wantPoint{{"2024-01-31", 3}, {"2024-02-29", 2}})
	checkRetention(t, got[1], []wantPoint{{"2024-02-29", 2}})
	jan := got[0].Lapse
	if jan.MaxTime() != 55 || jan.Events() != 1 || jan.AtRisk(29) != 3 || jan.AtRisk(30) != 2 {
		t.Errorf("January lapse: max %v, events %d, at risk at 29 and 30 = %d, %d; want 55, 1, 3, 2",
			jan.MaxTime(), jan.Events(), jan.AtRisk(29), jan.AtRisk(30))
	}
}

func checkRetention(t *testing.T, c Cohort, want []wantPoint) {
	t.Helper()
	if len(c.Retention) != len(want) {
		t.Fatalf("%s: %d retention points, want %d", c.Month, len(c.Retention), len(want))
	}
	for j, p := range want {
		r := c.Retention[j]
		if r.At != day(p.at) || r.Active != p.active {
			t.Errorf("%s point %d = %s with %d active, want %s with %d", c.Month, j, r.At, r.Active, p.at, p.active)
		}
		near(t, "Share", r.Share, float64(p.active)/float64(c.Size), 1e-15)
	}
}

func TestCohortTableNotSmall(t *testing.T) {
	var cust [][]civil.Date
	for range MinCohort {
		cust = append(cust, days("2023-11-15"))
	}
	got := CohortTable(cust, 30, day("2024-01-10"))
	if len(got) != 1 || got[0].Small || got[0].Note != "" {
		t.Fatalf("CohortTable = %+v, want one cohort not flagged small", got)
	}
	// Nov 30 all active; Dec 31 none (last order 11-15); 2024-01-10 none.
	checkRetention(t, got[0], []wantPoint{{"2023-11-30", 20}, {"2023-12-31", 0}, {"2024-01-10", 0}})
	if s := got[0].Lapse.At(30); s != 0 {
		t.Errorf("S(30) = %v, want 0: everyone lapsed 30 days after their only order", s)
	}
}

func TestCohortTableMisuse(t *testing.T) {
	tests := []struct {
		name   string
		cust   [][]civil.Date
		window int
	}{
		{"window zero", cohortCustomers(), 0},
		{"unsorted days", [][]civil.Date{days("2024-02-01", "2024-01-01")}, 30},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Error("CohortTable did not panic")
				}
			}()
			CohortTable(tt.cust, tt.window, day("2024-03-20"))
		})
	}
}
