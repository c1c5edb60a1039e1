package history

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"ebb/internal/civil"
)

// d parses a YYYY-MM-DD day or fails the test.
func d(t testing.TB, s string) civil.Date {
	t.Helper()
	day, err := civil.Parse(s)
	if err != nil {
		t.Fatal(err)
	}
	return day
}

// input is one raw order for a Builder; amount < 0 means no amount.
type input struct {
	customer int32
	day      string
	amount   float64
}

// mustBuild builds a History of customers customers from rows, in the
// order given.
func mustBuild(t *testing.T, customers int, through string, rows ...input) *History {
	t.Helper()
	b := NewBuilder(customers, len(rows))
	for _, r := range rows {
		b.Add(r.customer, d(t, r.day), max(r.amount, 0), r.amount >= 0)
	}
	h, err := b.Build(d(t, through))
	if err != nil {
		t.Fatalf("Build: %v", err)
	}
	return h
}

// shopRows are the orders of a hand-built shop, deliberately not sorted by
// customer or day:
//
//	customer 0: 2024-01-05 10.5 and 4.25 (one order day, 14.75),
//	            2024-02-10 2, 2024-03-01 without amount
//	customer 1: none (listed in a customers file only)
//	customer 2: 2024-02-10 7.5 (one order day)
//	customer 3: 2023-12-31 twice, both without amount (one day, NaN);
//	            2024-04-01 3 and one without amount (one day, 3)
//	customer 4: 2024-01-31 without amount (one order day, NaN)
//
// 10 orders, 3+0+1+2+1 = 7 order days; first 2023-12-31 and last
// 2024-04-01, both customer 3's.
var shopRows = []input{
	{0, "2024-03-01", -1},
	{3, "2024-04-01", 3},
	{0, "2024-01-05", 10.5},
	{2, "2024-02-10", 7.5},
	{3, "2023-12-31", -1},
	{0, "2024-02-10", 2},
	{4, "2024-01-31", -1},
	{3, "2024-04-01", -1},
	{0, "2024-01-05", 4.25},
	{3, "2023-12-31", -1},
}

func TestBuildShop(t *testing.T) {
	h := mustBuild(t, 5, "2024-04-30", shopRows...)
	nan := float32(math.NaN())
	tests := []struct {
		name     string
		customer int
		days     []string
		amounts  []float32
	}{
		{"same-day orders summed, day without amount NaN", 0, []string{"2024-01-05", "2024-02-10", "2024-03-01"}, []float32{14.75, 2, nan}},
		{"customer without orders", 1, nil, nil},
		{"one order day", 2, []string{"2024-02-10"}, []float32{7.5}},
		{"a day of orders without amounts is NaN, a mixed day sums the amounts it has", 3, []string{"2023-12-31", "2024-04-01"}, []float32{nan, 3}},
		{"one order day without amount", 4, []string{"2024-01-31"}, []float32{nan}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var want []civil.Date
			for _, s := range tt.days {
				want = append(want, d(t, s))
			}
			if got := h.Days(tt.customer); !slices.Equal(got, want) {
				t.Errorf("Days(%d) = %v, want %v", tt.customer, got, want)
			}
			if got := h.Amounts(tt.customer); !sameAmounts(got, tt.amounts) {
				t.Errorf("Amounts(%d) = %v, want %v", tt.customer, got, tt.amounts)
			}
		})
	}

	t.Run("totals", func(t *testing.T) {
		type totals struct {
			customers, orders, orderDays int
			first, last, through         civil.Date
			hasAmounts                   bool
		}
		got := totals{h.Customers(), h.Orders(), h.OrderDays(), h.First(), h.Last(), h.DataThrough(), h.HasAmounts()}
		want := totals{5, 10, 7, d(t, "2023-12-31"), d(t, "2024-04-01"), d(t, "2024-04-30"), true}
		if got != want {
			t.Errorf("totals = %+v, want %+v", got, want)
		}
	})
	t.Run("Days is capped at the customer's run", func(t *testing.T) {
		// Appending to customer 0's days must not overwrite customer 2's
		// (the next run in the shared slice).
		_ = append(h.Days(0), d(t, "2030-01-01"))
		if got := h.Days(2); !slices.Equal(got, []civil.Date{d(t, "2024-02-10")}) {
			t.Errorf("after an append to Days(0), Days(2) = %v, want [2024-02-10]", got)
		}
	})
	t.Run("WithDataThrough shares the orders", func(t *testing.T) {
		h2 := h.WithDataThrough(d(t, "2024-03-15"))
		if h2.DataThrough() != d(t, "2024-03-15") || h.DataThrough() != d(t, "2024-04-30") {
			t.Errorf("DataThrough = %s (copy), %s (original); want 2024-03-15, 2024-04-30", h2.DataThrough(), h.DataThrough())
		}
		if &h2.Days(0)[0] != &h.Days(0)[0] || h2.OrderDays() != 7 {
			t.Error("WithDataThrough copied or lost the order days")
		}
	})
	t.Run("Bytes", func(t *testing.T) {
		// start 6 int32 + days 7 Dates + amounts 7 float32 = 24+28+28 =
		// 80 bytes, plus the struct: 3 slice headers of 24 bytes, an int
		// and three Dates = 72+8+12, padded to 8 = 96.
		if got, want := h.Bytes(), 80+96; got != want {
			t.Errorf("Bytes() = %d, want %d", got, want)
		}
	})
}

// sameAmounts compares amounts with NaN equal to NaN (and nil to empty).
func sameAmounts(a, b []float32) bool {
	return slices.EqualFunc(a, b, func(x, y float32) bool {
		return x == y || (x != x && y != y)
	})
}

func TestBuildEdgeCases(t *testing.T) {
	t.Run("no amounts at all", func(t *testing.T) {
		h := mustBuild(t, 2, "2024-01-31", input{1, "2024-01-02", -1}, input{1, "2024-01-02", -1}, input{0, "2024-01-01", -1})
		// 3 orders, order days 0 {01-01} and 1 {01-02}: 2.
		if h.HasAmounts() || h.Amounts(0) != nil || h.Amounts(1) != nil {
			t.Errorf("HasAmounts() = %v, Amounts = %v %v; want false, nil, nil", h.HasAmounts(), h.Amounts(0), h.Amounts(1))
		}
		if got := h.AmountIn(1, d(t, "2023-12-31"), d(t, "2024-12-31")); got != 0 {
			t.Errorf("AmountIn without amounts = %v, want 0", got)
		}
		if h.Orders() != 3 || h.OrderDays() != 2 {
			t.Errorf("Orders, OrderDays = %d, %d; want 3, 2", h.Orders(), h.OrderDays())
		}
	})
	t.Run("customers without any order", func(t *testing.T) {
		h := mustBuild(t, 3, "2024-01-31")
		if h.Customers() != 3 || h.OrderDays() != 0 || h.Orders() != 0 || h.First() != 0 || h.Last() != 0 || h.HasAmounts() {
			t.Errorf("empty history: customers %d, order days %d, orders %d, first %v, last %v, amounts %v; want 3, 0, 0, 0, 0, false",
				h.Customers(), h.OrderDays(), h.Orders(), h.First(), h.Last(), h.HasAmounts())
		}
		for c := range 3 {
			if len(h.Days(c)) != 0 || h.CountIn(c, -1000, 1000) != 0 {
				t.Errorf("customer %d has days %v", c, h.Days(c))
			}
			if _, ok := h.LastOnOrBefore(c, 1000); ok {
				t.Errorf("LastOnOrBefore(%d) found a day", c)
			}
		}
	})
	t.Run("no customers", func(t *testing.T) {
		h := mustBuild(t, 0, "2024-01-31")
		if h.Customers() != 0 || h.OrderDays() != 0 {
			t.Errorf("Customers, OrderDays = %d, %d; want 0, 0", h.Customers(), h.OrderDays())
		}
	})
	t.Run("a long unsorted run with amounts", func(t *testing.T) {
		// 30 days 2024-01-30 down to 2024-01-01 (longer than insertionMax,
		// so the pair sort runs), each with orders of 1 and 0.5: 60
		// orders, 30 order days of 1.5; customer 1 keeps one day.
		var rows []input
		for i := range 30 {
			day := d(t, "2024-01-30") - civil.Date(i)
			rows = append(rows, input{0, day.String(), 1}, input{1, "2024-02-01", 2})
			rows = append(rows, input{0, day.String(), 0.5})
		}
		h := mustBuild(t, 2, "2024-02-01", rows...)
		var wantDays []civil.Date
		var wantAmounts []float32
		for i := range 30 {
			wantDays = append(wantDays, d(t, "2024-01-01")+civil.Date(i))
			wantAmounts = append(wantAmounts, 1.5)
		}
		if !slices.Equal(h.Days(0), wantDays) || !sameAmounts(h.Amounts(0), wantAmounts) {
			t.Errorf("customer 0: days %v amounts %v; want %v, 1.5 each", h.Days(0), h.Amounts(0), wantDays)
		}
		// Customer 1: 30 orders of 2 on 2024-02-01 = one day of 60.
		if !slices.Equal(h.Days(1), []civil.Date{d(t, "2024-02-01")}) || !sameAmounts(h.Amounts(1), []float32{60}) {
			t.Errorf("customer 1: days %v amounts %v; want [2024-02-01], [60]", h.Days(1), h.Amounts(1))
		}
		if h.Orders() != 90 || h.OrderDays() != 31 {
			t.Errorf("Orders, OrderDays = %d, %d; want 90, 31", h.Orders(), h.OrderDays())
		}
	})
	t.Run("days before 1970", func(t *testing.T) {
		// Day numbers below 0: 1969-12-31 is −1, so First is negative.
		h := mustBuild(t, 1, "1970-01-01", input{0, "1970-01-01", 1}, input{0, "1969-12-31", 2})
		if h.First() != -1 || h.Last() != 0 || !slices.Equal(h.Days(0), []civil.Date{-1, 0}) {
			t.Errorf("First, Last, Days = %v, %v, %v; want -1, 0, [-1 0]", int32(h.First()), int32(h.Last()), h.Days(0))
		}
	})
}

func TestBuildErrors(t *testing.T) {
	tests := []struct {
		name      string
		customers int
		customer  int32
		amount    float64
	}{
		{"negative customer id", 3, -1, 1},
		{"customer id equal to the count", 3, 3, 1},
		{"negative customer count", -1, 0, 1},
		{"NaN amount", 3, 0, math.NaN()},
		{"infinite amount", 3, 0, math.Inf(-1)},
		{"amount beyond float32", 3, 0, 1e39},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			b := NewBuilder(tt.customers, 0)
			b.Add(tt.customer, 19000, tt.amount, true)
			if h, err := b.Build(19000); err == nil {
				t.Errorf("Build = %d order days, want an error", h.OrderDays())
			}
		})
	}
	t.Run("a day's sum beyond float32", func(t *testing.T) {
		// 3e38 is a float32 (max 3.4e38); twice it on one day is not.
		b := NewBuilder(1, 2)
		b.Add(0, 19000, 3e38, true)
		b.Add(0, 19000, 3e38, true)
		if _, err := b.Build(19000); err == nil {
			t.Error("Build of a day summing to 6e38 succeeded, want an error")
		}
	})
	t.Run("Build twice", func(t *testing.T) {
		b := NewBuilder(1, 1)
		b.Add(0, 19000, 1, true)
		if _, err := b.Build(19000); err != nil {
			t.Fatalf("first Build: %v", err)
		}
		if _, err := b.Build(19000); err == nil {
			t.Error("second Build succeeded, want an error")
		}
	})
	t.Run("a good row after a bad one still fails", func(t *testing.T) {
		b := NewBuilder(2, 2)
		b.Add(5, 19000, 1, true)
		b.Add(1, 19000, 1, true)
		if _, err := b.Build(19000); err == nil {
			t.Error("Build succeeded after a bad row, want an error")
		}
	})
}

func TestQueries(t *testing.T) {
	h := mustBuild(t, 5, "2024-04-30", shopRows...)
	// Customer 0: 2024-01-05 (14.75), 2024-02-10 (2), 2024-03-01 (NaN).
	// Customer 3: 2023-12-31 (NaN), 2024-04-01 (3). Customer 1: none.
	t.Run("LastOnOrBefore", func(t *testing.T) {
		tests := []struct {
			name     string
			customer int
			t        string
			want     string // "" = none
		}{
			{"before the first order day", 0, "2024-01-04", ""},
			{"on the first order day (inclusive)", 0, "2024-01-05", "2024-01-05"},
			{"the day before the second", 0, "2024-02-09", "2024-01-05"},
			{"on the second", 0, "2024-02-10", "2024-02-10"},
			{"long after the last", 0, "2024-12-31", "2024-03-01"},
			{"customer without orders", 1, "2024-12-31", ""},
			{"single-day customer on its day", 2, "2024-02-10", "2024-02-10"},
		}
		for _, tt := range tests {
			t.Run(tt.name, func(t *testing.T) {
				got, ok := h.LastOnOrBefore(tt.customer, d(t, tt.t))
				switch {
				case tt.want == "" && ok:
					t.Errorf("LastOnOrBefore(%d, %s) = %s, want none", tt.customer, tt.t, got)
				case tt.want != "" && (!ok || got != d(t, tt.want)):
					t.Errorf("LastOnOrBefore(%d, %s) = %s, %v; want %s", tt.customer, tt.t, got, ok, tt.want)
				}
			})
		}
	})
	tests := []struct {
		name       string
		customer   int
		from, to   string
		wantCount  int
		wantAmount float64
	}{
		// (01-04, 03-01] holds all three days: 14.75 + 2, NaN skipped.
		{"all days, to inclusive", 0, "2024-01-04", "2024-03-01", 3, 16.75},
		// from is exclusive: (01-05, 03-01] drops 01-05: 02-10 (2), 03-01.
		{"from exclusive", 0, "2024-01-05", "2024-03-01", 2, 2},
		// (01-04, 02-29] drops 03-01: 14.75 + 2.
		{"to before the last day", 0, "2024-01-04", "2024-02-29", 2, 16.75},
		{"one-day window on an order day", 0, "2024-02-09", "2024-02-10", 1, 2},
		{"one-day window on the first day", 0, "2024-01-04", "2024-01-05", 1, 14.75},
		{"only a day without amount", 0, "2024-02-10", "2024-03-01", 1, 0},
		{"after the last day", 0, "2024-03-01", "2024-12-31", 0, 0},
		{"empty window to = from", 0, "2024-02-10", "2024-02-10", 0, 0},
		{"reversed window", 0, "2024-03-01", "2024-01-04", 0, 0},
		{"customer without orders", 1, "2000-01-01", "2030-01-01", 0, 0},
		// Customer 3: (2023-12-30, 2024-04-01] = both days, NaN + 3.
		{"mixed day keeps the amount it had", 3, "2023-12-30", "2024-04-01", 2, 3},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			from, to := d(t, tt.from), d(t, tt.to)
			if got := h.CountIn(tt.customer, from, to); got != tt.wantCount {
				t.Errorf("CountIn(%d, %s, %s) = %d, want %d", tt.customer, tt.from, tt.to, got, tt.wantCount)
			}
			if got := h.AmountIn(tt.customer, from, to); got != tt.wantAmount {
				t.Errorf("AmountIn(%d, %s, %s) = %v, want %v", tt.customer, tt.from, tt.to, got, tt.wantAmount)
			}
		})
	}
	t.Run("CountThrough", func(t *testing.T) {
		for _, c := range []struct {
			t    string
			want int
		}{{"2024-01-04", 0}, {"2024-01-05", 1}, {"2024-02-10", 2}, {"2025-01-01", 3}} {
			if got := h.CountThrough(0, d(t, c.t)); got != c.want {
				t.Errorf("CountThrough(0, %s) = %d, want %d", c.t, got, c.want)
			}
		}
	})
	t.Run("queries allocate nothing", func(t *testing.T) {
		from, to := d(t, "2024-01-04"), d(t, "2024-03-01")
		allocs := testing.AllocsPerRun(100, func() {
			h.LastOnOrBefore(0, to)
			h.CountIn(0, from, to)
			h.AmountIn(0, from, to)
			h.CountThrough(0, to)
			_ = h.Days(3)
			_ = h.Amounts(3)
		})
		if allocs != 0 {
			t.Errorf("queries allocate %v times a run, want 0", allocs)
		}
	})
}

// TestQueriesMatchNaiveScan compares every query with a scan of the raw
// orders on random data: 60 customers (some without orders), 3000 orders
// over 120 days so that many fall on a customer's day twice, a fifth
// without amount. Amounts are multiples of 0.25 below 100, so every sum
// here is exact in float32 and float64 and the comparison can be exact.
func TestQueriesMatchNaiveScan(t *testing.T) {
	const customers, orders, span = 60, 3000, 120
	rng := rand.New(rand.NewPCG(7, 11))
	type naiveDay struct {
		sum float64
		has bool
	}
	naive := make([]map[civil.Date]naiveDay, customers)
	for c := range naive {
		naive[c] = map[civil.Date]naiveDay{}
	}
	var rows []row
	for range orders {
		c := int32(rng.IntN(customers - 5)) // customers 55…59 never order
		day := civil.Date(19000 + rng.IntN(span))
		amount, has := float64(rng.IntN(400))/4, rng.IntN(5) > 0
		rows = append(rows, row{c, day, amount})
		if !has {
			rows[len(rows)-1].amount = math.NaN()
		}
		nd := naive[c][day]
		if has {
			nd.sum += amount
			nd.has = true
		}
		naive[c][day] = nd
	}
	build := func(rows []row) *History {
		b := NewBuilder(customers, len(rows))
		for _, r := range rows {
			b.Add(r.customer, r.day, r.amount, r.amount == r.amount)
		}
		h, err := b.Build(19000 + span)
		if err != nil {
			t.Fatal(err)
		}
		return h
	}
	h := build(rows)

	t.Run("input order does not matter", func(t *testing.T) {
		sorted := slices.Clone(rows)
		slices.SortStableFunc(sorted, func(a, b row) int {
			if a.customer != b.customer {
				return int(a.customer - b.customer)
			}
			return int(a.day - b.day)
		})
		h2 := build(sorted)
		for c := range customers {
			if !slices.Equal(h.Days(c), h2.Days(c)) || !sameAmounts(h.Amounts(c), h2.Amounts(c)) {
				t.Fatalf("customer %d: shuffled input gives %v %v, sorted input %v %v", c, h.Days(c), h.Amounts(c), h2.Days(c), h2.Amounts(c))
			}
		}
	})
	t.Run("days and amounts", func(t *testing.T) {
		total := 0
		for c := range customers {
			var want []civil.Date
			for day := range naive[c] {
				want = append(want, day)
			}
			slices.Sort(want)
			total += len(want)
			if !slices.Equal(h.Days(c), want) {
				t.Fatalf("Days(%d) = %v, want %v", c, h.Days(c), want)
			}
			for i, day := range want {
				nd, got := naive[c][day], h.Amounts(c)[i]
				if nd.has != (got == got) || (nd.has && float64(got) != nd.sum) {
					t.Fatalf("Amounts(%d)[%d] (%s) = %v, want %v (has %v)", c, i, day, got, nd.sum, nd.has)
				}
			}
		}
		if h.OrderDays() != total || h.Orders() != orders {
			t.Errorf("OrderDays, Orders = %d, %d; want %d, %d", h.OrderDays(), h.Orders(), total, orders)
		}
	})
	t.Run("windows", func(t *testing.T) {
		for range 20000 {
			c := rng.IntN(customers)
			// Bounds from 3 days before the span to 3 after, so that
			// windows start and end on order days, between them and
			// outside the data; to < from happens too.
			from := civil.Date(19000 - 3 + rng.IntN(span+6))
			to := civil.Date(19000 - 3 + rng.IntN(span+6))
			wantCount, wantAmount := 0, 0.0
			var wantLast civil.Date
			wantFound := false
			for day, nd := range naive[c] {
				if day > from && day <= to {
					wantCount++
					wantAmount += nd.sum
				}
				if day <= to && (!wantFound || day > wantLast) {
					wantLast, wantFound = day, true
				}
			}
			if got := h.CountIn(c, from, to); got != wantCount {
				t.Fatalf("CountIn(%d, %d, %d) = %d, want %d", c, from, to, got, wantCount)
			}
			if got := h.AmountIn(c, from, to); got != wantAmount {
				t.Fatalf("AmountIn(%d, %d, %d) = %v, want %v", c, from, to, got, wantAmount)
			}
			if got, ok := h.LastOnOrBefore(c, to); ok != wantFound || got != wantLast {
				t.Fatalf("LastOnOrBefore(%d, %d) = %d, %v; want %d, %v", c, to, got, ok, wantLast, wantFound)
			}
		}
	})
}
