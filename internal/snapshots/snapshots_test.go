package snapshots

import (
	"math"
	"math/rand/v2"
	"testing"

	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/problem"
)

var base = civil.FromYMD(2024, 1, 1)

func TestDates(t *testing.T) {
	first, through := base, base+1000
	ds, err := Dates(first, through, 90, 100, 7)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds) != 100 {
		t.Fatalf("got %d dates, want 100", len(ds))
	}
	for i, d := range ds {
		if d < first+365 || d > through-90 || (i > 0 && d <= ds[i-1]) {
			t.Fatalf("date %d = %s outside [%s, %s] or not ascending and distinct", i, d, first+365, through-90)
		}
	}
	again, _ := Dates(first, through, 90, 100, 7)
	other, _ := Dates(first, through, 90, 100, 8)
	same, differ := true, false
	for i := range ds {
		same = same && ds[i] == again[i]
		differ = differ || ds[i] != other[i]
	}
	if !same || !differ {
		t.Error("dates must repeat for a seed and change with it")
	}
	// A range smaller than n gives every day of it.
	all, _ := Dates(first, first+365+90+9, 90, 100, 1)
	if len(all) != 10 {
		t.Errorf("a 10-day range gave %d dates", len(all))
	}
	if _, err := Dates(first, first+400, 90, 100, 1); !problem.Is(err, problem.Invalid) {
		t.Errorf("too short a history: err = %v, want an Invalid problem", err)
	}
}

// Over many draws every weekday gets about a seventh of the dates: 4000
// draws give 571 a weekday, with a standard deviation of about 22; the
// bounds are over five standard deviations wide.
func TestDatesAreNotWeekdayAligned(t *testing.T) {
	var counts [7]int
	for seed := uint64(1); seed <= 40; seed++ {
		ds, err := Dates(base, base+2000, 90, 100, seed)
		if err != nil {
			t.Fatal(err)
		}
		for _, d := range ds {
			counts[d.Weekday()]++
		}
	}
	for wd, n := range counts {
		if n < 450 || n > 700 {
			t.Errorf("weekday %d got %d of 4000 dates, want about 571", wd, n)
		}
	}
}

// With H long against the history a 20% validation slice lies inside the
// embargo; the slice grows until one date in twenty survives. 100 dates
// five days apart (0…495), H = 90: test is 350…495; the 20% slice 280…345
// is all within 90 days of 350. Grown to start at 235, it keeps 235…255
// (5 dates, one in twenty); training 0…230 loses t ≥ 145 to its own
// embargo and keeps 0…140 (29 dates).
func TestSplitGrowsValidation(t *testing.T) {
	var ds []civil.Date
	for i := 0; i < 100; i++ {
		ds = append(ds, base+civil.Date(5*i))
	}
	parts, err := Split(ds, 90, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	count := map[Part]int{}
	firstValid := -1
	for i, p := range parts {
		count[p]++
		if p == Validation && firstValid < 0 {
			firstValid = 5 * i
		}
	}
	if count[Validation] != 5 || firstValid != 235 || count[Train] != 29 || count[Test] != 30 {
		t.Errorf("parts %v, first validation day %d; want 5 validation from 235, 29 train, 30 test", count, firstValid)
	}
}

func TestSplitWithEmbargo(t *testing.T) {
	// 20 dates ten days apart (0, 10, …, 190), H = 15. Test: the last 30%
	// = 6 dates (140…190). Validation: 20% of the other 14 = 3 (110, 120,
	// 130). Train: 0…100. Embargo: a train date t is dropped when t + 15 ≥
	// 110 (only 100); a validation date when t + 15 ≥ 140 (only 130).
	var ds []civil.Date
	for i := 0; i < 20; i++ {
		ds = append(ds, base+civil.Date(10*i))
	}
	parts, err := Split(ds, 15, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	want := []Part{Train, Train, Train, Train, Train, Train, Train, Train, Train, Train, Dropped,
		Validation, Validation, Dropped, Test, Test, Test, Test, Test, Test}
	for i := range want {
		if parts[i] != want[i] {
			t.Errorf("date %d (%d) is %s, want %s", i, 10*i, parts[i], want[i])
		}
	}
	if _, err := Split(ds[:3], 15, 0, 0); !problem.Is(err, problem.Invalid) {
		t.Errorf("3 dates: err = %v, want Invalid", err)
	}
	// A horizon as long as the whole span leaves no training date.
	if _, err := Split(ds, 200, 0, 0); !problem.Is(err, problem.Invalid) {
		t.Errorf("H = 200: err = %v, want Invalid", err)
	}
	folds, err := Folds(ds, 15, 2)
	if err != nil {
		t.Fatal(err)
	}
	for i := range ds {
		if folds[1][i] != parts[i] {
			t.Fatalf("the last fold differs from Split at date %d", i)
		}
	}
	// The earlier fold uses the 14 dates before the last test period: its
	// test is their last 30% (4 dates: 100…130), after the later ones
	// nothing (Dropped).
	for i := 10; i < 14; i++ {
		if folds[0][i] != Test {
			t.Errorf("fold 0 date %d is %s, want test", i, folds[0][i])
		}
	}
	for i := 14; i < 20; i++ {
		if folds[0][i] != Dropped {
			t.Errorf("fold 0 date %d is %s, want dropped", i, folds[0][i])
		}
	}
}

func build(t *testing.T, rows [][3]float64, customers int, through civil.Date) *history.History {
	t.Helper()
	b := history.NewBuilder(customers, len(rows))
	for _, r := range rows {
		b.Add(int32(r[0]), base+civil.Date(r[1]), r[2], !math.IsNaN(r[2]))
	}
	h, err := b.Build(through)
	if err != nil {
		t.Fatal(err)
	}
	return h
}

func TestFeaturesAndLabels(t *testing.T) {
	nan := math.NaN()
	// Customer 0 orders on days 0, 100, 300 (twice), 330 and 420; customer
	// 1 once on 340; customer 2 on 10 and 20 (lapsed by 400); customer 3
	// first orders on 500, after the snapshot.
	h := build(t, [][3]float64{
		{0, 0, 10}, {0, 100, 20}, {0, 300, 5}, {0, 300, 5}, {0, 330, 30}, {0, 420, 8},
		{1, 340, nan},
		{2, 10, 1}, {2, 20, 1},
		{3, 500, 1},
	}, 4, base+600)
	tab, err := Build(h, Options{WindowDays: 90, HorizonDays: 60, Dates: []civil.Date{base + 400}})
	if err != nil {
		t.Fatal(err)
	}
	// At t = 400 with X = 90: customer 0 (recency 70) and 1 (60) are
	// active; 2 (recency 380) is not; 3 has not ordered yet.
	if tab.Rows() != 2 || tab.Customer[0] != 0 || tab.Customer[1] != 1 {
		t.Fatalf("rows = %v, want customers 0 and 1", tab.Customer)
	}
	// Customer 0 at 400: order days 0, 100, 300, 330 (300 merged).
	//  recency 70; in (370,400]: 0; (310,400]: 330 → 1; (220,400]: 300,
	//  330 → 2; (35,400]: 100, 300, 330 → 3; total 4; tenure 400;
	//  mean gap (330−0)/3 = 110; last gap 30; recency/gap 70/110;
	//  spend in (220,400]: 10 + 30 = 40; mean value (10+20+10+30)/4 = 17.5;
	//  trend: 2 − order days in (40,220] (100) = 1.
	want0 := []float64{70, 0, 1, 2, 3, 4, 400, 110, 30, 70.0 / 110, 40, 17.5, 1}
	// Customer 1 at 400: one order day at 340, no amount: recency 60;
	//  windows 0, 1, 1, 1; total 1; tenure 60; gaps missing; spend 0 (the
	//  day has no amount; AmountIn skips it); mean value missing, since no
	//  order of theirs had an amount.
	want1 := []float64{60, 0, 1, 1, 1, 1, 60, nan, nan, nan, 0, nan, 1}
	for j, name := range tab.Names {
		for r, want := range [][]float64{want0, want1} {
			got := float64(tab.Cols[j][r])
			if !(math.IsNaN(got) && math.IsNaN(want[j])) && math.Abs(got-want[j]) > 1e-6 {
				t.Errorf("customer %d %s = %v, want %v", r, name, got, want[j])
			}
		}
	}
	// Labels with H = 60: customer 0 orders on 420 (in (400, 460]) → 0;
	// customer 1 has none → 1. 400 + 60 ≤ 600, so both are labelled.
	if tab.Label[0] != 0 || tab.Label[1] != 1 || !tab.Labelled[0] || !tab.Labelled[1] {
		t.Errorf("labels = %v (labelled %v), want [0 1] both labelled", tab.Label, tab.Labelled)
	}
	// A date whose horizon passes data_through is not labelled.
	tab, _ = Build(h, Options{WindowDays: 90, HorizonDays: 60, Dates: []civil.Date{base + 560}})
	for i := range tab.Labelled {
		if tab.Labelled[i] {
			t.Errorf("row %d at 560 + 60 > 600 is labelled", i)
		}
	}
}

// TestNoFeatureReadsTheFuture is the leak property: adding orders after t,
// or changing them, changes no feature at t.
func TestNoFeatureReadsTheFuture(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	const customers = 300
	var past [][3]float64
	for c := 0; c < customers; c++ {
		d := rng.IntN(300)
		for k := 0; k < 1+rng.IntN(8) && d < 1000; k++ {
			past = append(past, [3]float64{float64(c), float64(d), float64(1 + rng.IntN(50))})
			d += 1 + rng.IntN(120)
		}
	}
	for trial := 0; trial < 20; trial++ {
		tday := 380 + rng.IntN(400)
		var before [][3]float64
		for _, r := range past {
			if int(r[1]) <= tday {
				before = append(before, r)
			}
		}
		future := append([][3]float64(nil), before...)
		for _, r := range past {
			if int(r[1]) > tday {
				r[2] *= 3 // changed amounts after t
				future = append(future, r)
			}
		}
		for k := 0; k < 200; k++ { // and new orders after t
			future = append(future, [3]float64{float64(rng.IntN(customers)), float64(tday + 1 + rng.IntN(300)), 7})
		}
		opt := Options{WindowDays: 120, HorizonDays: 90, Dates: []civil.Date{base + civil.Date(tday)}}
		ha, hb := build(t, before, customers, base+1400), build(t, future, customers, base+1400)
		// The BG/NBD feature too: its parameters are fitted on orders up to
		// the earliest snapshot date, here t, on each history.
		pa, _, errA := FitBGNBD(ha, opt.Dates[0], 0, 1)
		pb, _, errB := FitBGNBD(hb, opt.Dates[0], 0, 1)
		if errA != nil || errB != nil {
			t.Fatalf("fit BG/NBD: %v %v", errA, errB)
		}
		optA, optB := opt, opt
		optA.BGNBD, optB.BGNBD = &pa, &pb
		a, _ := Build(ha, optA)
		b, _ := Build(hb, optB)
		if a.Names[len(a.Names)-1] != FeatureBGNBD {
			t.Fatalf("names = %v, want %s last", a.Names, FeatureBGNBD)
		}
		if a.Rows() != b.Rows() {
			t.Fatalf("t=%d: %d rows without the future, %d with it", tday, a.Rows(), b.Rows())
		}
		for j := range a.Cols {
			for r := range a.Cols[j] {
				x, y := a.Cols[j][r], b.Cols[j][r]
				if x != y && !(x != x && y != y) {
					t.Fatalf("t=%d customer %d: %s = %v without the future, %v with it", tday, a.Customer[r], a.Names[j], x, y)
				}
			}
		}
	}
}

func TestRowCapKeepsWholeCustomers(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	var rows [][3]float64
	for c := 0; c < 1000; c++ {
		for d := rng.IntN(30); d < 900; d += 20 + rng.IntN(20) {
			rows = append(rows, [3]float64{float64(c), float64(d), 1})
		}
	}
	h := build(t, rows, 1000, base+900)
	dates := []civil.Date{base + 400, base + 500, base + 600, base + 700}
	full, _ := Build(h, Options{WindowDays: 60, HorizonDays: 60, Dates: dates})
	capped, _ := Build(h, Options{WindowDays: 60, HorizonDays: 60, Dates: dates, MaxRows: full.Rows() / 4, Seed: 5})
	if capped.RowsBeforeCap != full.Rows() || capped.Rows() > full.Rows()/3 || capped.Rows() < full.Rows()/6 {
		t.Fatalf("cap: %d of %d rows kept (before cap %d), want about a quarter", capped.Rows(), full.Rows(), capped.RowsBeforeCap)
	}
	// Every kept customer keeps all of its rows.
	perFull, perCapped := map[int32]int{}, map[int32]int{}
	for _, c := range full.Customer {
		perFull[c]++
	}
	for _, c := range capped.Customer {
		perCapped[c]++
	}
	for c, n := range perCapped {
		if n != perFull[c] {
			t.Errorf("customer %d kept %d of its %d rows", c, n, perFull[c])
		}
	}
}
