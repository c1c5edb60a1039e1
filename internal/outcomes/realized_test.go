package outcomes

import (
	"testing"
)

// listRows builds the hand-worked list of TestRealized: 100 customers
// selected (10 of them withheld as holdout) and 110 not selected (10 of
// them in the holdout).
//
//   - selected holdout, band "high": scores .95, .90, …, .50; the seven
//     highest did not order again (7 of 10);
//   - holdout not selected: scores .45, .40, …, .10 (band "low") and .05,
//     .02 (no band); .45 and .40 did not order again (2 of 10);
//   - contacted: 90 customers scored .6, 40 did not order again (treated:
//     they must not count in precision or calibration);
//   - neither: 100 customers scored .1, 15 did not order again.
func listRows() []Scored {
	var rows []Scored
	for i, p := range []float64{.95, .90, .85, .80, .75, .70, .65, .60, .55, .50} {
		rows = append(rows, Scored{Probability: p, Selected: true, Holdout: true, Band: "high", NoReorder: i < 7})
	}
	for i, p := range []float64{.45, .40, .35, .30, .25, .20, .15, .10, .05, .02} {
		band := "low"
		if i >= 8 {
			band = ""
		}
		rows = append(rows, Scored{Probability: p, Holdout: true, Band: band, NoReorder: i < 2})
	}
	for i := range 90 {
		rows = append(rows, Scored{Probability: .6, Selected: true, Band: "high", NoReorder: i < 40})
	}
	for i := range 100 {
		rows = append(rows, Scored{Probability: .1, Band: "low", NoReorder: i < 15})
	}
	return rows
}

// TestRealized checks the wiring on listRows, worked by hand:
//
//	precision 7/10; expected no-reorders on the list 0.7 × 100 = 70;
//	missed: 2 (holdout, not selected) + 15 = 17; recall 70/87 = 0.8046;
//	calibration on the 20 holdout members: mean score 9.52/20 = 0.476,
//	realized 9/20; band high 7.25/10 = 0.725 and 7/10, band low
//	2.2/8 = 0.275 and 2/8; deciles of 20 distinct scores hold two each.
//
// Intervals are Wilson's at 95%, checked against the reference in
// TestWilson.
func TestRealized(t *testing.T) {
	acc, err := Realized(listRows(), 90)
	if err != nil {
		t.Fatal(err)
	}
	if acc.ListSize != 100 || acc.MissedNoReorder != 17 || acc.HorizonDays != 90 {
		t.Errorf("ListSize, MissedNoReorder, HorizonDays = %d, %d, %d, want 100, 17, 90", acc.ListSize, acc.MissedNoReorder, acc.HorizonDays)
	}
	wantProportion(t, "Precision", acc.Precision, 7, 10)
	near(t, "ExpectedOnList", acc.ExpectedOnList, 70, 1e-12)
	near(t, "Recall", acc.Recall, 70.0/87, 1e-12)
	near(t, "Calibration.MeanPredicted", acc.Calibration.MeanPredicted, 0.476, 1e-12)
	wantProportion(t, "Calibration.Realized", acc.Calibration.Realized, 9, 20)

	sentences := []struct{ name, got, want string }{
		{"PrecisionSentence", acc.PrecisionSentence, "Of the 10 customers on this list's holdout, 7 (70%) did not order again within 90 days."},
		{"RecallSentence", acc.RecallSentence, "Of an estimated 87 customers who would not have ordered again without contact, about 70 (80%) were on the list."},
		{"CalibrationSentence", acc.CalibrationSentence, "On the holdout, the model expected 48% of customers not to order again within 90 days; 45% did not (95% interval 26% to 66%)."},
	}
	for _, s := range sentences {
		if s.got != s.want {
			t.Errorf("%s =\n%q\nwant\n%q", s.name, s.got, s.want)
		}
	}

	if len(acc.ByBand) != 2 || acc.ByBand[0].Band != "high" || acc.ByBand[1].Band != "low" {
		t.Fatalf("ByBand = %+v, want high then low", acc.ByBand)
	}
	near(t, "high MeanPredicted", acc.ByBand[0].MeanPredicted, 0.725, 1e-12)
	wantProportion(t, "high Realized", acc.ByBand[0].Realized, 7, 10)
	near(t, "low MeanPredicted", acc.ByBand[1].MeanPredicted, 0.275, 1e-12)
	wantProportion(t, "low Realized", acc.ByBand[1].Realized, 2, 8)

	// Deciles, lowest first: pairs of scores and their no-reorder counts.
	deciles := []struct {
		mean float64
		x    int
	}{{.035, 0}, {.125, 0}, {.225, 0}, {.325, 0}, {.425, 2}, {.525, 0}, {.625, 1}, {.725, 2}, {.825, 2}, {.925, 2}}
	if len(acc.ByDecile) != len(deciles) {
		t.Fatalf("ByDecile has %d rows, want %d", len(acc.ByDecile), len(deciles))
	}
	for i, d := range deciles {
		row := acc.ByDecile[i]
		near(t, "decile MeanPredicted", row.MeanPredicted, d.mean, 1e-12)
		wantProportion(t, "decile Realized", row.Realized, d.x, 2)
		if i > 0 && row.Lower != acc.ByDecile[i-1].Upper {
			t.Errorf("decile %d starts at %v, previous ends at %v", i+1, row.Lower, acc.ByDecile[i-1].Upper)
		}
	}
	if acc.ByDecile[0].Lower != .02 || acc.ByDecile[9].Upper != .95 {
		t.Errorf("deciles span %v to %v, want .02 to .95", acc.ByDecile[0].Lower, acc.ByDecile[9].Upper)
	}
}

func wantProportion(t *testing.T, name string, got Proportion, x, n int) {
	t.Helper()
	lo, hi, _ := Wilson(x, n, Z95)
	want := Proportion{N: n, X: x, Rate: float64(x) / float64(n), Lo: lo, Hi: hi}
	if got != want {
		t.Errorf("%s = %+v, want %+v", name, got, want)
	}
}

func TestRealizedNobodyLapsed(t *testing.T) {
	rows := listRows()
	for i := range rows {
		rows[i].NoReorder = false
	}
	acc, err := Realized(rows, 1)
	if err != nil {
		t.Fatal(err)
	}
	if acc.Recall != 0 {
		t.Errorf("Recall = %v, want 0", acc.Recall)
	}
	for _, s := range []struct{ got, want string }{
		{acc.PrecisionSentence, "Of the 10 customers on this list's holdout, 0 (0%) did not order again within 1 day."},
		{acc.RecallSentence, "No scored customer is estimated to have failed to order again, so there was no one for the list to find."},
	} {
		if s.got != s.want {
			t.Errorf("sentence =\n%q\nwant\n%q", s.got, s.want)
		}
	}
}

func TestRealizedErrors(t *testing.T) {
	noHoldout := listRows()
	for i := range noHoldout {
		noHoldout[i].Holdout = false
	}
	noneSelected := listRows()
	for i := range noneSelected {
		if noneSelected[i].Holdout {
			noneSelected[i].Selected = false
		}
	}
	badProb := listRows()
	badProb[3].Probability = 1.5
	nanProb := listRows()
	nanProb[150].Probability = nan()
	tests := []struct {
		name        string
		rows        []Scored
		horizonDays int
	}{
		{"no rows", nil, 90},
		{"horizon zero", listRows(), 0},
		{"probability above 1", badProb, 90},
		{"probability NaN", nanProb, 90},
		{"no holdout", noHoldout, 90},
		{"no holdout on the list", noneSelected, 90},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Realized(tt.rows, tt.horizonDays)
			wantInvalid(t, err)
		})
	}
}
