package outcomes

import (
	"testing"

	"ebb/internal/civil"
)

// arm describes one group of members to build: n customers in band, of
// whom noReorder did not order again.
type arm struct {
	contacted    bool
	band         string
	n, noReorder int
}

// buildMembers turns arms into members with distinct customer numbers,
// all first selected in the week of 2024-03-04.
func buildMembers(arms ...arm) []Member {
	week := civil.FromYMD(2024, 3, 4)
	var out []Member
	for _, a := range arms {
		for i := range a.n {
			out = append(out, Member{
				Customer: int32(len(out) + 1), Contacted: a.contacted, Band: a.band,
				WeekStart: week, NoReorder: i < a.noReorder,
			})
		}
	}
	return out
}

// The expected differences and limits come from an independent R 4.2.2
// implementation of Wilson's and Newcombe's formulas, and the detectable
// effects from the R function mde of testdata/power.R (uniroot, tol 1e-14);
// tolerance 1e-9. The sentences are ebb's wording.
func TestMeasureEffect(t *testing.T) {
	tests := []struct {
		name       string
		contacted  [2]int // n, no reorder
		holdout    [2]int
		d, lo, hi  float64
		sufficient bool
		mde        float64
		sentence   string
	}{
		{"contact helped", [2]int{2000, 700}, [2]int{1000, 410},
			-0.06, -0.097029323909934156, -0.023213091138445455, true, 0.052643322414275912,
			"Contacted customers failed to reorder 6.0 points less often than the holdout (95% interval 2.3 to 9.7 points)."},
		{"contact hurt", [2]int{2000, 820}, [2]int{1000, 350},
			0.06, 0.023101646467160487, 0.096174454131140286, true, 0.050641919980354319,
			"Contacted customers failed to reorder 6.0 points more often than the holdout (95% interval 2.3 to 9.6 points)."},
		{"no clear difference", [2]int{900, 333}, [2]int{100, 41},
			-0.04, -0.14275081524571065, 0.056781733433618656, true, 0.13669528393644437,
			"There is no clear difference: contacted customers failed to reorder 4.0 points less often than the holdout, but the 95% interval runs from 14.3 points less often to 5.7 points more often."},
		{"equal rates", [2]int{300, 120}, [2]int{100, 40},
			0, -0.11181091047064523, 0.106700328828451, true, 0.14882766082057367,
			"There is no clear difference: contacted customers failed to reorder as often as the holdout, and the 95% interval runs from 11.2 points less often to 10.7 points more often."},
		{"too few customers, nothing detectable", [2]int{25, 10}, [2]int{3, 1},
			0.066666666666666707, -0.42142402542865814, 0.39982517375558208, false, 0,
			"The groups are too small to say anything yet: 25 contacted and 3 holdout customers (a common rule of thumb asks for at least 30 in each group, with at least 5 who ordered again and 5 who did not). With groups of this size, even a drop from 33% to 0% could not be detected reliably."},
		{"too few of one outcome", [2]int{200, 3}, [2]int{50, 10},
			-0.185, -0.31574533033043639, -0.093019025570254626, false, 0.13816900788769371,
			"The groups are too small to say anything yet: 200 contacted and 50 holdout customers (a common rule of thumb asks for at least 30 in each group, with at least 5 who ordered again and 5 who did not). With groups of this size, only a drop of at least 13.8 points from the holdout's 20% could be detected reliably (80% power, 5% two-sided test)."},
		{"holdout all reordered", [2]int{40, 10}, [2]int{30, 0},
			0.25, 0.093229050004900893, 0.40193961420768021, false, 0,
			"The groups are too small to say anything yet: 40 contacted and 30 holdout customers (a common rule of thumb asks for at least 30 in each group, with at least 5 who ordered again and 5 who did not). No holdout customer failed to reorder, so there was no drop to detect."},
		{"no holdout", [2]int{40, 10}, [2]int{0, 0}, 0, 0, 0, false, 0,
			"None of the 40 customers selected was in the holdout, so there is no one to compare the contacted customers with."},
		{"no contacted", [2]int{0, 0}, [2]int{12, 1}, 0, 0, 0, false, 0,
			"All 12 customers selected were in the holdout, so there are no contacted customers to compare with them."},
		{"one holdout customer only", [2]int{0, 0}, [2]int{1, 1}, 0, 0, 0, false, 0,
			"The only customer selected was in the holdout, so there are no contacted customers to compare with."},
		{"one contacted customer only", [2]int{1, 0}, [2]int{0, 0}, 0, 0, 0, false, 0,
			"The only customer selected was contacted, so there is no holdout to compare with."},
		{"nobody", [2]int{0, 0}, [2]int{0, 0}, 0, 0, 0, false, 0,
			"No customers were selected in a holdout period yet, so there is nothing to compare."},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			members := buildMembers(arm{true, "", tt.contacted[0], tt.contacted[1]}, arm{false, "", tt.holdout[0], tt.holdout[1]})
			e, bands, err := MeasureEffect(members)
			if err != nil {
				t.Fatal(err)
			}
			if len(bands) != 0 {
				t.Errorf("MeasureEffect gave %d bands for members without a band", len(bands))
			}
			if e.Contacted.N != tt.contacted[0] || e.Contacted.NoReorder != tt.contacted[1] ||
				e.Holdout.N != tt.holdout[0] || e.Holdout.NoReorder != tt.holdout[1] {
				t.Errorf("groups = %+v and %+v, want %v and %v", e.Contacted, e.Holdout, tt.contacted, tt.holdout)
			}
			near(t, "Diff", e.Diff, tt.d, 1e-9)
			near(t, "Lo", e.Lo, tt.lo, 1e-9)
			near(t, "Hi", e.Hi, tt.hi, 1e-9)
			near(t, "MDE", e.MDE, tt.mde, 1e-9)
			if e.Sufficient != tt.sufficient {
				t.Errorf("Sufficient = %v, want %v", e.Sufficient, tt.sufficient)
			}
			if e.Sentence != tt.sentence {
				t.Errorf("Sentence =\n%q\nwant\n%q", e.Sentence, tt.sentence)
			}
		})
	}
}

func TestMeasureEffectBands(t *testing.T) {
	members := buildMembers(
		arm{true, "high", 2000, 700}, arm{false, "high", 1000, 410},
		arm{true, "medium", 25, 10}, arm{false, "medium", 3, 1},
		arm{true, "", 10, 5}, arm{false, "", 10, 5},
	)
	overall, bands, err := MeasureEffect(members)
	if err != nil {
		t.Fatal(err)
	}
	if overall.Contacted.N != 2035 || overall.Contacted.NoReorder != 715 || overall.Holdout.N != 1013 || overall.Holdout.NoReorder != 416 {
		t.Errorf("overall groups = %+v and %+v, want 2035/715 and 1013/416", overall.Contacted, overall.Holdout)
	}
	d, lo, hi, _ := NewcombeDiff(715, 2035, 416, 1013, Z95)
	if overall.Diff != d || overall.Lo != lo || overall.Hi != hi {
		t.Errorf("overall = %v (%v, %v), want NewcombeDiff's %v (%v, %v)", overall.Diff, overall.Lo, overall.Hi, d, lo, hi)
	}
	if len(bands) != 2 || bands[0].Band != "high" || bands[1].Band != "medium" {
		t.Fatalf("bands = %+v, want high then medium", bands)
	}
	near(t, "high Lo", bands[0].Lo, -0.097029323909934156, 1e-9)
	if !bands[0].Sufficient || bands[1].Sufficient {
		t.Errorf("Sufficient = %v, %v, want true, false", bands[0].Sufficient, bands[1].Sufficient)
	}
}

func TestMeasureEffectDuplicate(t *testing.T) {
	members := buildMembers(arm{true, "", 3, 1}, arm{false, "", 3, 1})
	members[4].Customer = members[0].Customer
	_, _, err := MeasureEffect(members)
	wantInvalid(t, err)

	// The same customer in another holdout period (another week) is fine.
	members[4].WeekStart += 28
	if _, _, err := MeasureEffect(members); err != nil {
		t.Errorf("MeasureEffect with one customer in two periods: %v", err)
	}
}

func TestFirstSelections(t *testing.T) {
	w1, w2, w3 := civil.FromYMD(2024, 3, 4), civil.FromYMD(2024, 3, 11), civil.FromYMD(2024, 3, 18)
	in := []Selection{
		{Customer: 7, Period: 1, Week: w3, Contacted: true, Band: "high"},
		{Customer: 7, Period: 1, Week: w2, Contacted: true, Band: "medium"},
		{Customer: 5, Period: 1, Week: w2, Contacted: false, Band: "medium"},
		{Customer: 5, Period: 1, Week: w2, Contacted: false, Band: "high"}, // same week: smallest band kept
		{Customer: 7, Period: 2, Week: w3, Contacted: false, Band: "low"},  // a new period counts again
		{Customer: 9, Period: 1, Week: w1, Contacted: true, Band: "low"},
	}
	want := []Selection{
		{Customer: 9, Period: 1, Week: w1, Contacted: true, Band: "low"},
		{Customer: 5, Period: 1, Week: w2, Contacted: false, Band: "high"},
		{Customer: 7, Period: 1, Week: w2, Contacted: true, Band: "medium"},
		{Customer: 7, Period: 2, Week: w3, Contacted: false, Band: "low"},
	}
	got, err := FirstSelections(in)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) {
		t.Fatalf("FirstSelections = %+v, want %+v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("FirstSelections[%d] = %+v, want %+v", i, got[i], want[i])
		}
	}
	if in[0].Week != w3 {
		t.Error("FirstSelections reordered its input")
	}
	m := got[1].Member(true)
	if m != (Member{Customer: 5, Contacted: false, Band: "high", WeekStart: w2, NoReorder: true}) {
		t.Errorf("Member = %+v", m)
	}

	in = append(in, Selection{Customer: 9, Period: 1, Week: w3, Contacted: false})
	_, err = FirstSelections(in)
	wantInvalid(t, err)
}
