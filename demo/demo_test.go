package demo

import (
	"bytes"
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"
)

// render writes all three files of b into buffers.
func render(t *testing.T, b Business) (orders, customers, truth []byte) {
	t.Helper()
	var o, c, tr bytes.Buffer
	if err := b.WriteOrders(&o); err != nil {
		t.Fatal(err)
	}
	if err := b.WriteCustomers(&c); err != nil {
		t.Fatal(err)
	}
	if err := b.WriteTruth(&tr); err != nil {
		t.Fatal(err)
	}
	return o.Bytes(), c.Bytes(), tr.Bytes()
}

func readCSV(t *testing.T, data []byte) [][]string {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(data)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

func TestDeterminism(t *testing.T) {
	tests := []struct {
		name     string
		a, b     Options
		wantSame bool
	}{
		{"same default seed", Options{}, Options{}, true},
		{"zero seed means seed 1", Options{}, Options{Seed: 1, Customers: 4000}, true},
		{"same explicit seed", Options{Seed: 42, Customers: 500}, Options{Seed: 42, Customers: 500}, true},
		{"different seed", Options{Seed: 1}, Options{Seed: 2}, false},
		{"different seed small", Options{Seed: 7, Customers: 300}, Options{Seed: 8, Customers: 300}, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			oa, ca, _ := render(t, Generate(tt.a))
			ob, cb, _ := render(t, Generate(tt.b))
			if got := bytes.Equal(oa, ob); got != tt.wantSame {
				t.Errorf("orders.csv equal = %v, want %v", got, tt.wantSame)
			}
			if got := bytes.Equal(ca, cb); got != tt.wantSame {
				t.Errorf("customers.csv equal = %v, want %v", got, tt.wantSame)
			}
		})
	}
}

func TestHeaders(t *testing.T) {
	b := Generate(Options{Customers: 50})
	o, c, tr := render(t, b)
	tests := []struct {
		file string
		data []byte
		want string
	}{
		{"orders.csv", o, "customer_id,order_date,amount,order_id"},
		{"customers.csv", c, "customer_id,email,signup_date,contactable,channel,first_line,region"},
		{"truth.csv", tr, "customer_id,rate_per_year,dropout_date,active_at_end"},
	}
	for _, tt := range tests {
		t.Run(tt.file, func(t *testing.T) {
			first, _, _ := strings.Cut(string(tt.data), "\n")
			if first != tt.want {
				t.Errorf("header = %q, want %q", first, tt.want)
			}
		})
	}
}

func TestFixedDates(t *testing.T) {
	b := Generate(Options{Customers: 10})
	if want := time.Date(2023, 11, 1, 0, 0, 0, 0, time.UTC); !b.Start.Equal(want) {
		t.Errorf("Start = %v, want %v", b.Start, want)
	}
	if want := time.Date(2026, 10, 31, 0, 0, 0, 0, time.UTC); !b.End.Equal(want) {
		t.Errorf("End = %v, want %v", b.End, want)
	}
}

func TestConsistency(t *testing.T) {
	for _, opt := range []Options{{}, {Seed: 99, Customers: 700}} {
		b := Generate(opt)
		wantN := opt.Customers
		if wantN == 0 {
			wantN = DefaultCustomers
		}
		if len(b.Customers) != wantN {
			t.Fatalf("got %d customers, want %d", len(b.Customers), wantN)
		}

		byKey := map[string]*Customer{}
		emails := map[string]bool{}
		for i := range b.Customers {
			c := &b.Customers[i]
			if byKey[c.Key] != nil {
				t.Errorf("duplicate customer key %s", c.Key)
			}
			byKey[c.Key] = c
			if want := customerKey(i); c.Key != want {
				t.Errorf("customer %d key = %s, want %s", i, c.Key, want)
			}
			if !strings.HasSuffix(c.Email, "@example.com") || emails[c.Email] {
				t.Errorf("bad or duplicate email %q", c.Email)
			}
			emails[c.Email] = true
			if i > 0 && c.Signup.Before(b.Customers[i-1].Signup) {
				t.Errorf("%s signs up before the previous key", c.Key)
			}
			if c.RatePerYear <= 0 {
				t.Errorf("%s rate %v", c.Key, c.RatePerYear)
			}
			if !c.DropoutDay.IsZero() && (!c.DropoutDay.After(c.Signup) || c.DropoutDay.After(b.End)) {
				t.Errorf("%s dropout %v outside (signup %v, End]", c.Key, c.DropoutDay, c.Signup)
			}
		}

		first := map[string]time.Time{}
		ids := map[string]bool{}
		for i, o := range b.Orders {
			c := byKey[o.CustomerKey]
			if c == nil {
				t.Fatalf("order %s for unknown customer %s", o.ID, o.CustomerKey)
			}
			if o.Date.Before(b.Start) || o.Date.After(b.End) {
				t.Errorf("order %s date %v outside [Start, End]", o.ID, o.Date)
			}
			if o.Date.Hour() != 0 || o.Date.Location() != time.UTC {
				t.Errorf("order %s date %v not UTC midnight", o.ID, o.Date)
			}
			if !c.DropoutDay.IsZero() && !o.Date.Before(c.DropoutDay) {
				t.Errorf("order %s on %v on/after dropout %v", o.ID, o.Date, c.DropoutDay)
			}
			if o.Amount <= 0 || math.Round(o.Amount*100)/100 != o.Amount {
				t.Errorf("order %s amount %v not positive with 2 decimals", o.ID, o.Amount)
			}
			if ids[o.ID] {
				t.Errorf("duplicate order ID %s", o.ID)
			}
			ids[o.ID] = true
			if i > 0 {
				prev := b.Orders[i-1]
				if o.Date.Before(prev.Date) || (o.Date.Equal(prev.Date) && o.ID <= prev.ID) {
					t.Errorf("orders not sorted by date then ID at %s", o.ID)
				}
			}
			if f, ok := first[o.CustomerKey]; !ok || o.Date.Before(f) {
				first[o.CustomerKey] = o.Date
			}
		}
		for _, c := range b.Customers {
			f, ok := first[c.Key]
			if !ok {
				t.Errorf("%s has no order", c.Key)
				continue
			}
			if !f.Equal(c.Signup) {
				t.Errorf("%s signup %v != first order %v", c.Key, c.Signup, f)
			}
		}
	}
}

// TestShares checks the headline shares of the default business against the
// ranges stated in README.md.
func TestShares(t *testing.T) {
	b := Generate(Options{})
	days := map[string]map[time.Time]bool{}
	repeats := 0
	for _, o := range b.Orders {
		if days[o.CustomerKey] == nil {
			days[o.CustomerKey] = map[time.Time]bool{}
		}
		if days[o.CustomerKey][o.Date] {
			repeats++
		}
		days[o.CustomerKey][o.Date] = true
	}
	var single, nonContact, dropped, active int
	attrs := map[string]map[string]int{"channel": {}, "first_line": {}, "region": {}}
	for _, c := range b.Customers {
		if len(days[c.Key]) == 1 {
			single++
		}
		if !c.Contactable {
			nonContact++
		}
		if c.DropoutDay.IsZero() {
			active++
		} else {
			dropped++
		}
		attrs["channel"][c.Channel]++
		attrs["first_line"][c.FirstLine]++
		attrs["region"][c.Region]++
	}
	orderDays := 0
	for _, d := range days {
		orderDays += len(d)
	}
	n := float64(len(b.Customers))
	t.Logf("orders=%d orderDays=%d single=%.3f nonContactable=%.3f repeats=%d active=%d dropped=%d",
		len(b.Orders), orderDays, float64(single)/n, float64(nonContact)/n, repeats, active, dropped)

	tests := []struct {
		name   string
		got    float64
		lo, hi float64
	}{
		{"single-order-day share", float64(single) / n, 0.25, 0.35},
		{"non-contactable share", float64(nonContact) / n, 0.02, 0.07},
		{"same-day repeat share of order days", float64(repeats) / float64(orderDays), 0.015, 0.045},
		{"active-at-end share", float64(active) / n, 0.2, 0.8},
		{"orders per customer", float64(len(b.Orders)) / n, 2, 10},
	}
	for _, tt := range tests {
		if tt.got < tt.lo || tt.got > tt.hi {
			t.Errorf("%s = %.3f, want in [%.3f, %.3f]", tt.name, tt.got, tt.lo, tt.hi)
		}
	}
	if repeats == 0 || active == 0 || dropped == 0 {
		t.Errorf("repeats=%d active=%d dropped=%d, want all > 0", repeats, active, dropped)
	}

	want := map[string][]string{
		"channel":    {"market_stall", "referral", "search", "social"},
		"first_line": {"bodycare", "kitchen", "laundry"},
		"region":     {"east", "north", "south", "west"},
	}
	for attr, vals := range want {
		got := make([]string, 0, len(attrs[attr]))
		for v := range attrs[attr] {
			got = append(got, v)
		}
		slices.Sort(got)
		if !slices.Equal(got, vals) {
			t.Errorf("%s values = %v, want %v", attr, got, vals)
		}
	}
}

// TestGrowth checks that acquisition grows: the last year brings more new
// customers than the first.
func TestGrowth(t *testing.T) {
	b := Generate(Options{})
	firstYearEnd := b.Start.AddDate(1, 0, 0)
	lastYearStart := b.End.AddDate(-1, 0, 1)
	var first, last int
	for _, c := range b.Customers {
		switch {
		case c.Signup.Before(firstYearEnd):
			first++
		case !c.Signup.Before(lastYearStart):
			last++
		}
	}
	if float64(last) < 1.3*float64(first) {
		t.Errorf("first-year sign-ups %d, last-year %d; want last at least 1.3x first", first, last)
	}
}

func TestCSVValues(t *testing.T) {
	b := Generate(Options{Seed: 3, Customers: 200})
	o, c, tr := render(t, b)

	orders := readCSV(t, o)
	if len(orders) != len(b.Orders)+1 {
		t.Fatalf("orders.csv has %d rows, want %d", len(orders), len(b.Orders)+1)
	}
	for i, rec := range orders[1:] {
		want := b.Orders[i]
		if rec[0] != want.CustomerKey || rec[1] != want.Date.Format("2006-01-02") || rec[2] != formatAmount(want.Amount) || rec[3] != want.ID {
			t.Fatalf("orders row %d = %v, want %+v", i, rec, want)
		}
		if _, frac, ok := strings.Cut(rec[2], "."); !ok || len(frac) != 2 {
			t.Fatalf("amount %q lacks 2 decimals", rec[2])
		}
		if !strings.HasPrefix(rec[3], "LR-") || len(rec[3]) != len("LR-0000000") {
			t.Fatalf("order id %q", rec[3])
		}
	}

	customers := readCSV(t, c)
	truth := readCSV(t, tr)
	if len(customers) != len(b.Customers)+1 || len(truth) != len(b.Customers)+1 {
		t.Fatalf("customers.csv %d rows, truth.csv %d rows, want %d", len(customers), len(truth), len(b.Customers)+1)
	}
	for i, cu := range b.Customers {
		rec := customers[i+1]
		if rec[0] != cu.Key || rec[1] != cu.Email || rec[2] != cu.Signup.Format("2006-01-02") {
			t.Fatalf("customers row %d = %v, want %+v", i, rec, cu)
		}
		if rec[3] != "true" && rec[3] != "false" {
			t.Fatalf("contactable %q", rec[3])
		}
		tru := truth[i+1]
		if cu.DropoutDay.IsZero() != (tru[2] == "") || (tru[3] == "true") != cu.DropoutDay.IsZero() {
			t.Fatalf("truth row %d = %v, dropout %v", i, tru, cu.DropoutDay)
		}
	}
}

func TestWriteDir(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "nested", "out")
	opt := Options{Seed: 5, Customers: 100}
	if err := WriteDir(dir, opt); err != nil {
		t.Fatal(err)
	}
	wantO, wantC, wantT := render(t, Generate(opt))
	for name, want := range map[string][]byte{OrdersFile: wantO, CustomersFile: wantC, TruthFile: wantT} {
		got, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%s differs from the writer output", name)
		}
	}
	// Writing again overwrites in place and leaves no temporary files.
	if err := WriteDir(dir, opt); err != nil {
		t.Fatal(err)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		names = append(names, e.Name())
	}
	if want := []string{CustomersFile, OrdersFile, TruthFile}; !slices.Equal(names, want) {
		t.Errorf("dir holds %v, want %v", names, want)
	}
}

func BenchmarkGenerate(b *testing.B) {
	for b.Loop() {
		Generate(Options{})
	}
}
