package store

import (
	"context"
	"fmt"
	"slices"
	"strconv"
	"strings"
	"testing"

	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/ingest"
	"ebb/internal/problem"
)

// historyShop is the hand-built store of the history tests:
//
//	dataset "other" (imported first, so that version ids and seqs differ):
//	  customer 0 x: 2023-06-01 twice, no amounts
//
//	dataset "shop", customer ids: 0 ann, 1 dee (customers file of v1; dee
//	never orders), 2 bob, 3 cat (orders of v1), 4 eve (v2), 5 fay (v3)
//
//	v1 (import, ready)              v2 (append, ready)
//	  ann 2024-01-05 10               eve 2024-05-01 -
//	  ann 2024-01-05 5   same day     eve 2024-05-03 2
//	  bob 2024-01-20 7                bob 2024-01-20 1   bob's v1 day again
//	  cat 2024-03-02 -                ann 2024-04-30 4
//	  ann 2024-03-10 2.5
//
//	v3 (append, still loading)
//	  fay 2024-06-01 9
//	  ann 2024-07-01 8
type historyShop struct {
	st                 *Store
	shop, other        int64 // dataset ids
	v1, v2, v3, vOther int64
}

func buildHistoryShop(t *testing.T) historyShop {
	t.Helper()
	ctx := context.Background()
	s := historyShop{st: mustOpenStore(t)}

	other := importReady(t, s.st, "other", false, batch(t, 0, []string{"x"},
		order{0, "2023-06-01", -1, ""}, order{0, "2023-06-01", -1, ""}))
	s.other, s.vOther = other.DatasetID, other.VersionID

	imp1 := begin(t, s.st, "shop", false)
	s.shop, s.v1 = imp1.DatasetID, imp1.VersionID
	if err := s.st.WriteCustomers(ctx, imp1, 0, nil, []ingest.Customer{
		{ID: 0, Key: "ann", Contactable: true},
		{ID: 1, Key: "dee", Contactable: true},
	}); err != nil {
		t.Fatalf("WriteCustomers: %v", err)
	}
	b1 := batch(t, 2, []string{"bob", "cat"},
		order{0, "2024-01-05", 10, ""},
		order{0, "2024-01-05", 5, ""},
		order{2, "2024-01-20", 7, ""},
		order{3, "2024-03-02", -1, ""},
		order{0, "2024-03-10", 2.5, ""},
	)
	write(t, s.st, imp1, b1)
	if err := s.st.FinishImport(ctx, imp1, statsOf(b1)); err != nil {
		t.Fatalf("FinishImport v1: %v", err)
	}

	s.v2 = importReady(t, s.st, "shop", true, batch(t, 4, []string{"eve"},
		order{4, "2024-05-01", -1, ""},
		order{4, "2024-05-03", 2, ""},
		order{2, "2024-01-20", 1, ""},
		order{0, "2024-04-30", 4, ""},
	)).VersionID

	imp3 := begin(t, s.st, "shop", true)
	s.v3 = imp3.VersionID
	write(t, s.st, imp3, batch(t, 5, []string{"fay"},
		order{5, "2024-06-01", 9, ""},
		order{0, "2024-07-01", 8, ""},
	))
	return s
}

// describeHistory lists a History's figures and each customer's order days
// as "c: day amount, …" ("-" for a day without amount).
func describeHistory(h *history.History) []string {
	out := []string{fmt.Sprintf("customers %d, orders %d, order days %d, amounts %v, first %s, last %s, through %s",
		h.Customers(), h.Orders(), h.OrderDays(), h.HasAmounts(), h.First(), h.Last(), h.DataThrough())}
	for c := range h.Customers() {
		var days []string
		for i, d := range h.Days(c) {
			a := "-"
			if h.HasAmounts() && h.Amounts(c)[i] == h.Amounts(c)[i] {
				a = strconv.FormatFloat(float64(h.Amounts(c)[i]), 'f', -1, 32)
			}
			days = append(days, d.String()+" "+a)
		}
		out = append(out, fmt.Sprintf("%d: %s", c, strings.Join(days, ", ")))
	}
	return out
}

func TestLoadHistory(t *testing.T) {
	s := buildHistoryShop(t)
	tests := []struct {
		name    string
		version func() int64
		want    []string
	}{
		{
			// v1: 5 orders; ann's two 2024-01-05 orders are one day of 15;
			// dee (customers file) has none; cat's day has no amount. 4
			// order days; data through the last order day, 2024-03-10.
			name: "v1 leaves out the later versions", version: func() int64 { return s.v1 },
			want: []string{
				"customers 4, orders 5, order days 4, amounts true, first 2024-01-05, last 2024-03-10, through 2024-03-10",
				"0: 2024-01-05 15, 2024-03-10 2.5",
				"1: ",
				"2: 2024-01-20 7",
				"3: 2024-03-02 -",
			},
		},
		{
			// v2 adds 4 orders (9) and eve; bob's second 2024-01-20 order
			// joins his day (7 + 1 = 8); ann gains 2024-04-30 after her v1
			// days; eve's first day has no amount. Order days
			// 3 + 0 + 1 + 1 + 2 = 7.
			name: "v2 adds its orders and customers", version: func() int64 { return s.v2 },
			want: []string{
				"customers 5, orders 9, order days 7, amounts true, first 2024-01-05, last 2024-05-03, through 2024-05-03",
				"0: 2024-01-05 15, 2024-03-10 2.5, 2024-04-30 4",
				"1: ",
				"2: 2024-01-20 8",
				"3: 2024-03-02 -",
				"4: 2024-05-01 -, 2024-05-03 2",
			},
		},
		{
			// v3 is loading: as of itself it counts (11 orders, fay, 9
			// order days), and its data through is its last order day
			// although its last_day is not written yet.
			name: "a loading version reads itself", version: func() int64 { return s.v3 },
			want: []string{
				"customers 6, orders 11, order days 9, amounts true, first 2024-01-05, last 2024-07-01, through 2024-07-01",
				"0: 2024-01-05 15, 2024-03-10 2.5, 2024-04-30 4, 2024-07-01 8",
				"1: ",
				"2: 2024-01-20 8",
				"3: 2024-03-02 -",
				"4: 2024-05-01 -, 2024-05-03 2",
				"5: 2024-06-01 9",
			},
		},
		{
			// Another dataset's orders and customers never mix in; its
			// two same-day orders without amounts are one day, no amounts.
			name: "a dataset without amounts", version: func() int64 { return s.vOther },
			want: []string{
				"customers 1, orders 2, order days 1, amounts false, first 2023-06-01, last 2023-06-01, through 2023-06-01",
				"0: 2023-06-01 -",
			},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			h, err := s.st.LoadHistory(context.Background(), tt.version())
			if err != nil {
				t.Fatalf("LoadHistory(%d): %v", tt.version(), err)
			}
			if got := describeHistory(h); !slices.Equal(got, tt.want) {
				t.Errorf("LoadHistory(%d) =\n%s\nwant\n%s", tt.version(), strings.Join(got, "\n"), strings.Join(tt.want, "\n"))
			}
		})
	}
}

func TestLoadHistoryDataThrough(t *testing.T) {
	s := buildHistoryShop(t)
	ctx := context.Background()
	set := func(t *testing.T, day *civil.Date) {
		t.Helper()
		if err := s.st.SetDataThrough(ctx, s.shop, day); err != nil {
			t.Fatalf("SetDataThrough: %v", err)
		}
	}
	chosen := day(t, "2024-02-29")
	steps := []struct {
		name    string
		setting *civil.Date
		version int64
		want    string
		wantEnd string // the last order day, which the setting never changes
	}{
		// The analyst's day applies to every version of the dataset, even
		// when it is before the last order day (v1: 2024-03-10).
		{"setting honoured for v1", &chosen, s.v1, "2024-02-29", "2024-03-10"},
		{"setting honoured for v2", &chosen, s.v2, "2024-02-29", "2024-05-03"},
		{"cleared: v2's last order day again", nil, s.v2, "2024-05-03", "2024-05-03"},
	}
	for _, st := range steps {
		t.Run(st.name, func(t *testing.T) {
			set(t, st.setting)
			h, err := s.st.LoadHistory(ctx, st.version)
			if err != nil {
				t.Fatalf("LoadHistory(%d): %v", st.version, err)
			}
			if got := h.DataThrough().String(); got != st.want {
				t.Errorf("DataThrough() = %s, want %s", got, st.want)
			}
			if got := h.Last().String(); got != st.wantEnd {
				t.Errorf("Last() = %s, want %s", got, st.wantEnd)
			}
		})
	}
	t.Run("the other dataset keeps its own", func(t *testing.T) {
		set(t, &chosen)
		h, err := s.st.LoadHistory(ctx, s.vOther)
		if err != nil {
			t.Fatal(err)
		}
		if got := h.DataThrough().String(); got != "2023-06-01" {
			t.Errorf("other's DataThrough() = %s, want 2023-06-01", got)
		}
	})
}

func TestLoadHistoryEdgeCases(t *testing.T) {
	ctx := context.Background()
	t.Run("missing version is NotFound", func(t *testing.T) {
		st := mustOpenStore(t)
		_, err := st.LoadHistory(ctx, 999)
		if !problem.Is(err, problem.NotFound) {
			t.Errorf("LoadHistory(999) error = %v, want a NotFound problem", err)
		}
	})
	t.Run("customers file without orders", func(t *testing.T) {
		st := mustOpenStore(t)
		imp := begin(t, st, "list", false)
		if err := st.WriteCustomers(ctx, imp, 0, nil, []ingest.Customer{{ID: 0, Key: "a"}, {ID: 1, Key: "b"}}); err != nil {
			t.Fatal(err)
		}
		if err := st.FinishImport(ctx, imp, ImportStats{CustomersAdded: 2}); err != nil {
			t.Fatal(err)
		}
		h, err := st.LoadHistory(ctx, imp.VersionID)
		if err != nil {
			t.Fatal(err)
		}
		// Two customers, no orders: no order days, data through the zero
		// Date (1970-01-01), as there is neither a setting nor an order.
		want := []string{
			"customers 2, orders 0, order days 0, amounts false, first 1970-01-01, last 1970-01-01, through 1970-01-01",
			"0: ", "1: ",
		}
		if got := describeHistory(h); !slices.Equal(got, want) {
			t.Errorf("LoadHistory = %q, want %q", got, want)
		}
	})
}

// BenchmarkLoadHistory loads the history of 1M orders of 200k customers in
// two versions (benchStatsStore) and reports the History's memory per order
// (target: at most 2 s per load on the 2-core build machine, DESIGN.md §3).
func BenchmarkLoadHistory(b *testing.B) {
	if testing.Short() {
		b.Skip("imports 1M orders; skipped under -short")
	}
	st, version := benchStatsStore(b)
	ctx := context.Background()
	b.ReportAllocs()
	var h *history.History
	for b.Loop() {
		var err error
		if h, err = st.LoadHistory(ctx, version); err != nil {
			b.Fatal(err)
		}
	}
	if h.Orders() != 1_000_000 || h.Customers() != 200_000 {
		b.Fatalf("loaded %d orders of %d customers, want 1000000 of 200000", h.Orders(), h.Customers())
	}
	b.ReportMetric(float64(h.Bytes())/float64(h.Orders()), "bytes/order")
}
