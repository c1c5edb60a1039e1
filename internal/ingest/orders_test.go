package ingest

import (
	"context"
	"errors"
	"os"
	"strings"
	"testing"
	"time"

	"ebb/internal/civil"
	"ebb/internal/problem"
)

var today = civil.FromYMD(2026, 12, 1)

type readResult struct {
	orders []Order
	keys   *Keys
	sum    *OrderSummary
	err    error
}

func read(t *testing.T, input string, opt OrderOptions) readResult {
	t.Helper()
	if opt.File == "" {
		opt.File = "orders.csv"
	}
	if opt.Keys == nil {
		opt.Keys = NewKeys(nil)
	}
	if opt.Today == 0 {
		opt.Today = today
	}
	if opt.Refs == nil {
		opt.Refs = NewRefSet()
	}
	var got []Order
	sum, err := ReadOrders(context.Background(), strings.NewReader(input), opt, func(b Batch) error {
		got = append(got, b.Orders...)
		return nil
	})
	return readResult{got, opt.Keys, sum, err}
}

func day(s string) civil.Date {
	d, err := civil.Parse(s)
	if err != nil {
		panic(err)
	}
	return d
}

func TestReadOrdersAccepts(t *testing.T) {
	big := strings.Repeat("x", 1<<20)
	tests := []struct {
		name      string
		input     string
		opt       OrderOptions
		wantDays  []string
		wantKeys  []string
		wantAmt   []float64 // -1 = absent
		wantRefs  []string
		wantDelim byte
	}{
		{
			name:     "plain",
			input:    "customer_id,order_date,amount,order_id\nC1,2024-01-05,12.50,A1\nC2,2024-01-06,3,A2\n",
			wantDays: []string{"2024-01-05", "2024-01-06"}, wantKeys: []string{"C1", "C2"},
			wantAmt: []float64{12.5, 3}, wantRefs: []string{"A1", "A2"}, wantDelim: ',',
		},
		{
			name:     "BOM, CRLF and a quoted delimiter",
			input:    "\xef\xbb\xbfcustomer_id,order_date,amount,order_id\r\nC1,2024-01-05,12.50,A1\r\n\"C,2\",2024-01-06,\"3.00\",A2\r\n",
			wantDays: []string{"2024-01-05", "2024-01-06"}, wantKeys: []string{"C1", "C,2"},
			wantAmt: []float64{12.5, 3}, wantRefs: []string{"A1", "A2"}, wantDelim: ',',
		},
		{
			name:     "semicolon, explicit columns, day-first layout",
			input:    "Kunde;Bestelldatum;Betrag\nK1;14.03.2024;12.5\nK2;01.02.2024;3\n",
			opt:      OrderOptions{Columns: Columns{Customer: "kunde", Date: "Bestelldatum", Amount: "betrag"}, Dates: DateOptions{Layout: "DD.MM.YYYY"}},
			wantDays: []string{"2024-03-14", "2024-02-01"}, wantKeys: []string{"K1", "K2"},
			wantAmt: []float64{12.5, 3}, wantRefs: []string{"", ""}, wantDelim: ';',
		},
		{
			name:     "tab, usual names, no refs",
			input:    "customer\tdate\ttotal\nA\t2024-03-01\t1\nB\t2024-03-02\t\n",
			wantDays: []string{"2024-03-01", "2024-03-02"}, wantKeys: []string{"A", "B"},
			wantAmt: []float64{1, -1}, wantRefs: []string{"", ""}, wantDelim: '\t',
		},
		{
			name:     "day-first slash dates with times",
			input:    "customer_id,order_date\nA,03/04/2024\nB,31/12/2023 23:59\nC,1/2/2024 9:05\n",
			opt:      OrderOptions{Dates: DateOptions{DayFirst: true}},
			wantDays: []string{"2024-04-03", "2023-12-31", "2024-02-01"}, wantKeys: []string{"A", "B", "C"},
			wantAmt: []float64{-1, -1, -1}, wantRefs: []string{"", "", ""}, wantDelim: ',',
		},
		{
			name:     "month-first slash dates",
			input:    "customer_id,order_date\nA,03/04/2024\nB,12/31/2023\n",
			opt:      OrderOptions{Dates: DateOptions{MonthFirst: true}},
			wantDays: []string{"2024-03-04", "2023-12-31"}, wantKeys: []string{"A", "B"},
			wantAmt: []float64{-1, -1}, wantRefs: []string{"", ""}, wantDelim: ',',
		},
		{
			name:     "month names",
			input:    "customer_id,order_date\nA,14 Mar 2024\nB,1 dec 2023\n",
			opt:      OrderOptions{Dates: DateOptions{Layout: "DD MMM YYYY"}},
			wantDays: []string{"2024-03-14", "2023-12-01"}, wantKeys: []string{"A", "B"},
			wantAmt: []float64{-1, -1}, wantRefs: []string{"", ""}, wantDelim: ',',
		},
		{
			name:     "a 1 MB line",
			input:    "customer_id,order_date,amount,note\nC1,2024-01-05,1.00," + big + "\nC2,2024-01-06,2.00,y\n",
			wantDays: []string{"2024-01-05", "2024-01-06"}, wantKeys: []string{"C1", "C2"},
			wantAmt: []float64{1, 2}, wantRefs: []string{"", ""}, wantDelim: ',',
		},
		{
			name:     "blank lines and spaces around values",
			input:    "customer_id , order_date\n\n C1 , 2024-01-05 \n\nC1,2024-01-05\n",
			wantDays: []string{"2024-01-05", "2024-01-05"}, wantKeys: []string{"C1", "C1"},
			wantAmt: []float64{-1, -1}, wantRefs: []string{"", ""}, wantDelim: ',',
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := read(t, tt.input, tt.opt)
			if r.err != nil {
				t.Fatalf("ReadOrders: %v", r.err)
			}
			if r.sum.Delimiter != tt.wantDelim {
				t.Errorf("Delimiter = %q, want %q", r.sum.Delimiter, tt.wantDelim)
			}
			if len(r.orders) != len(tt.wantDays) {
				t.Fatalf("got %d orders, want %d", len(r.orders), len(tt.wantDays))
			}
			for i, o := range r.orders {
				if o.Day.String() != tt.wantDays[i] {
					t.Errorf("order %d day = %s, want %s", i, o.Day, tt.wantDays[i])
				}
				if k := r.keys.Key(o.Customer); k != tt.wantKeys[i] {
					t.Errorf("order %d customer = %q, want %q", i, k, tt.wantKeys[i])
				}
				wantHas := tt.wantAmt[i] >= 0
				if o.HasAmount != wantHas || (wantHas && o.Amount != tt.wantAmt[i]) {
					t.Errorf("order %d amount = %v (has %v), want %v", i, o.Amount, o.HasAmount, tt.wantAmt[i])
				}
				if o.Ref != tt.wantRefs[i] {
					t.Errorf("order %d ref = %q, want %q", i, o.Ref, tt.wantRefs[i])
				}
			}
			if r.sum.Accepted != len(tt.wantDays) || r.sum.Rows != len(tt.wantDays) {
				t.Errorf("Accepted, Rows = %d, %d; want %d each", r.sum.Accepted, r.sum.Rows, len(tt.wantDays))
			}
		})
	}
}

// Each kind of bad input must be named by file, line and column.
func TestReadOrdersRejects(t *testing.T) {
	const head = "customer_id,order_date,amount,order_id\n"
	tests := []struct {
		name  string
		input string
		opt   OrderOptions
		want  []string // Problem.String() of each problem, in order
	}{
		{"empty file", "", OrderOptions{}, []string{"orders.csv:1:0: the file is empty"}},
		{"header only", head, OrderOptions{}, []string{"orders.csv:2:0: the file has a header but no orders"}},
		{"no customer column", "shopper,order_date\nA,2024-01-01\n", OrderOptions{},
			[]string{"orders.csv:1:0: no customer column found in the header (found shopper, order_date)"}},
		{"mapped column missing", head + "A,2024-01-01,1,R\n", OrderOptions{Columns: Columns{Date: "placed"}},
			[]string{`orders.csv:1:0: the date column "placed" is not in the header`}},
		{"empty key", head + ",2024-01-01,1,R1\n", OrderOptions{},
			[]string{"orders.csv:2:1: column customer_id: the customer key is empty"}},
		{"empty date", head + "A,,1,R1\n", OrderOptions{},
			[]string{"orders.csv:2:2: column order_date: the order date is empty"}},
		{"ambiguous slash date", head + "A,3/4/2024,1,R1\n", OrderOptions{},
			[]string{`orders.csv:2:2: column order_date: "3/4/2024" is not an ISO 8601 date (YYYY-MM-DD); it looks like a day-first or month-first date`}},
		{"impossible day", head + "A,2023-02-29,1,R1\n", OrderOptions{},
			[]string{`orders.csv:2:2: column order_date: "2023-02-29" is not a real calendar day`}},
		{"month-first date read day-first", "customer_id,order_date\nA,03/14/2024\n", OrderOptions{Dates: DateOptions{DayFirst: true}},
			[]string{`orders.csv:2:2: column order_date: "03/14/2024" is not a real calendar day when read as DD/MM/YYYY`}},
		{"future date", head + "A,2026-12-02,1,R1\n", OrderOptions{},
			[]string{`orders.csv:2:2: column order_date: "2026-12-02" is after today (2026-12-01)`}},
		{"bad amount", head + "A,2024-01-01,$12,R1\n", OrderOptions{},
			[]string{`orders.csv:2:3: column amount: "$12" is not a number`}},
		{"decimal comma", head + "A,2024-01-01,\"12,50\",R1\n", OrderOptions{},
			[]string{`orders.csv:2:3: column amount: "12,50" is not a plain number`}},
		{"negative amount", head + "A,2024-01-01,-3,R1\n", OrderOptions{},
			[]string{`orders.csv:2:3: column amount: "-3" is negative`}},
		{"duplicate reference", head + "A,2024-01-01,1,R1\nB,2024-01-02,1,R1\n", OrderOptions{},
			[]string{`orders.csv:3:4: column order_id: order reference "R1" already appears on line 2`}},
		{"wrong field count", head + "A,2024-01-01,1\n", OrderOptions{},
			[]string{"orders.csv:2:0: has 3 fields but the header has 4"}},
		{"broken quoting", head + "A,2024-01-01,1,R1\n\"B,2024-01-02,1,R2\n", OrderOptions{},
			[]string{"orders.csv:3:"}},
		{"bare quote", head + "A,2024-0\"1-01,1,R1\n", OrderOptions{},
			[]string{`orders.csv:2:9: a quote (") appears inside an unquoted value`}},
		{"bad time", head + "A,2024-01-01T25:00,1,R1\n", OrderOptions{},
			[]string{`orders.csv:2:2: column order_date: "2024-01-01T25:00" has a time that is not ISO 8601`}},
		{"not UTF-8", head + "A\xff,2024-01-01,1,R1\n", OrderOptions{},
			[]string{"orders.csv:2:1: column customer_id: the customer key is not valid UTF-8"}},
		{"two problems on one line, then one more", head + "A,2024-13-01,x,R1\nB,2024-01-01,1,R2\n,2024-01-01,1,R3\n", OrderOptions{},
			[]string{`orders.csv:2:2: column order_date: "2024-13-01" is not a real calendar day`, `orders.csv:2:3: column amount: "x" is not a number`,
				"orders.csv:4:1: column customer_id: the customer key is empty"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := read(t, tt.input, tt.opt)
			var rej *Rejected
			if !errors.As(r.err, &rej) {
				t.Fatalf("ReadOrders error = %v, want *Rejected", r.err)
			}
			if !problem.Is(r.err, problem.Invalid) {
				t.Errorf("a rejection must be an Invalid problem for web and cmd")
			}
			if rej.Count != len(tt.want) || len(rej.Problems) != len(tt.want) {
				t.Fatalf("got %d problems %v, want %d", rej.Count, rej.Problems, len(tt.want))
			}
			for i, p := range rej.Problems {
				if !strings.HasPrefix(p.String(), tt.want[i]) {
					t.Errorf("problem %d = %q, want prefix %q", i, p, tt.want[i])
				}
			}
		})
	}
}

// Under Reject the sink is never called after the first problem, so a
// caller writing batches stops writing at once.
func TestRejectStopsSinking(t *testing.T) {
	var b strings.Builder
	b.WriteString("customer_id,order_date\n")
	for i := 0; i < 50; i++ {
		b.WriteString("A,2024-01-01\n")
	}
	b.WriteString("A,bad\n")
	for i := 0; i < 50; i++ {
		b.WriteString("A,2024-01-01\n")
	}
	calls, orders := 0, 0
	_, err := ReadOrders(context.Background(), strings.NewReader(b.String()), OrderOptions{
		File: "o.csv", Keys: NewKeys(nil), Today: today, BatchSize: 10,
	}, func(bt Batch) error { calls++; orders += len(bt.Orders); return nil })
	var rej *Rejected
	if !errors.As(err, &rej) {
		t.Fatalf("err = %v, want *Rejected", err)
	}
	if orders != 50 || calls != 5 {
		t.Errorf("sink saw %d orders in %d calls, want 50 in 5 (nothing after line 52)", orders, calls)
	}
}

func TestSkipPolicy(t *testing.T) {
	var seen []Problem
	r := read(t, "customer_id,order_date,amount\nA,2024-01-01,1\nB,nope,2\nC,2024-01-03,\n", OrderOptions{
		Policy: Skip, OnProblem: func(p Problem) { seen = append(seen, p) }})
	if r.err != nil {
		t.Fatalf("ReadOrders: %v", r.err)
	}
	if r.sum.Accepted != 2 || r.sum.Skipped != 1 || r.sum.ProblemCount != 1 || len(seen) != 1 {
		t.Fatalf("Accepted, Skipped, Problems, seen = %d, %d, %d, %d; want 2, 1, 1, 1", r.sum.Accepted, r.sum.Skipped, r.sum.ProblemCount, len(seen))
	}
	if seen[0].Line != 3 || seen[0].Col != 2 {
		t.Errorf("problem at %d:%d, want 3:2", seen[0].Line, seen[0].Col)
	}
	// Customer B had only a bad row, so it must not have been given an id.
	if r.keys.Len() != 2 {
		t.Errorf("keys = %d, want 2 (A and C)", r.keys.Len())
	}
	all := read(t, "customer_id,order_date\nA,x\nB,y\n", OrderOptions{Policy: Skip})
	var rej *Rejected
	if !errors.As(all.err, &rej) || !strings.Contains(rej.Message(), "no row of the file is a valid order") {
		t.Errorf("all rows bad under skip: err = %v, want a rejection saying no row is valid", all.err)
	}
}

func TestProblemsAreCappedButCounted(t *testing.T) {
	var b strings.Builder
	b.WriteString("customer_id,order_date\n")
	for i := 0; i < 250; i++ {
		b.WriteString(",2024-01-01\n")
	}
	r := read(t, b.String(), OrderOptions{})
	var rej *Rejected
	if !errors.As(r.err, &rej) {
		t.Fatalf("err = %v", r.err)
	}
	if rej.Count != 250 || len(rej.Problems) != MaxShown {
		t.Errorf("Count, shown = %d, %d; want 250, %d", rej.Count, len(rej.Problems), MaxShown)
	}
	if want := "orders.csv was not imported: 250 problems (the first 100 are listed)"; rej.Message() != want {
		t.Errorf("Message() = %q, want %q", rej.Message(), want)
	}
}

// Timestamps become dates in the dataset's zone; the same instant can fall
// on different days in different zones. Zone offsets checked against the
// IANA database through the standard library.
func TestTimeZonesAcrossMidnight(t *testing.T) {
	tokyo, _ := time.LoadLocation("Asia/Tokyo")
	ny, _ := time.LoadLocation("America/New_York")
	tests := []struct {
		name  string
		value string
		loc   *time.Location
		want  string
	}{
		{"UTC instant, UTC dataset", "2024-03-10T23:30:00Z", time.UTC, "2024-03-10"},
		{"UTC instant, Tokyo dataset (+9)", "2024-03-10T23:30:00Z", tokyo, "2024-03-11"},
		{"offset instant, UTC dataset", "2024-03-11T00:30:00+02:00", time.UTC, "2024-03-10"},
		{"offset instant without colon", "2024-03-11T00:30:00+0200", time.UTC, "2024-03-10"},
		{"New York across DST start", "2024-03-10T04:30:00Z", ny, "2024-03-09"},
		{"New York after DST start", "2024-03-10T07:30:00Z", ny, "2024-03-10"},
		{"wall time without offset stays on its day", "2024-03-10T23:30:00", tokyo, "2024-03-10"},
		{"space separator and fraction", "2024-03-10 23:30:00.123Z", tokyo, "2024-03-11"},
		{"negative offset to next UTC day", "2024-12-31T22:00:00-05:00", time.UTC, "2025-01-01"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := read(t, "customer_id,order_date\nA,"+tt.value+"\n", OrderOptions{Location: tt.loc})
			if r.err != nil {
				t.Fatalf("ReadOrders: %v", r.err)
			}
			if got := r.orders[0].Day.String(); got != tt.want {
				t.Errorf("day of %s in %s = %s, want %s", tt.value, tt.loc, got, tt.want)
			}
		})
	}
}

func TestBatchesCarryNewCustomers(t *testing.T) {
	keys := NewKeys([]string{"OLD"})
	var batches []Batch
	_, err := ReadOrders(context.Background(), strings.NewReader("customer_id,order_date\nOLD,2024-01-01\nN1,2024-01-01\nN2,2024-01-02\nN1,2024-01-03\n"),
		OrderOptions{File: "o.csv", Keys: keys, Today: today, BatchSize: 2}, func(b Batch) error {
			batches = append(batches, b)
			return nil
		})
	if err != nil {
		t.Fatal(err)
	}
	if len(batches) != 2 {
		t.Fatalf("got %d batches, want 2", len(batches))
	}
	if b := batches[0]; b.FirstNewID != 1 || strings.Join(b.NewKeys, ",") != "N1" {
		t.Errorf("batch 0 new = %d %v, want 1 [N1]", b.FirstNewID, b.NewKeys)
	}
	if b := batches[1]; b.FirstNewID != 2 || strings.Join(b.NewKeys, ",") != "N2" {
		t.Errorf("batch 1 new = %d %v, want 2 [N2]", b.FirstNewID, b.NewKeys)
	}
}

func TestRepeatsOfStoredOrders(t *testing.T) {
	keys := NewKeys([]string{"A"})
	refs := NewRefSet()
	refs.AddStored("R1", 0, day("2024-01-01"), 10, true)
	r := read(t, "customer_id,order_date,amount,order_id\nA,2024-01-01,10.00,R1\nA,2024-01-05,5,R2\nA,2024-01-02,10,R1\n",
		OrderOptions{Keys: keys, Refs: refs, Policy: Skip})
	if r.err != nil {
		t.Fatal(r.err)
	}
	if r.sum.Repeats != 1 || r.sum.Accepted != 1 || r.sum.ProblemCount != 1 {
		t.Errorf("Repeats, Accepted, Problems = %d, %d, %d; want 1, 1, 1", r.sum.Repeats, r.sum.Accepted, r.sum.ProblemCount)
	}
	if p := r.sum.Problems[0].String(); !strings.Contains(p, `order reference "R1" already appears on line 2`) {
		t.Errorf("problem = %q", p)
	}

	// Without references, stored orders are matched as a multiset: one
	// stored order absorbs one identical row, a second identical row is new.
	existing := NewOrderSet()
	existing.Add(0, day("2024-01-01"), 10, true)
	r = read(t, "customer_id,order_date,amount\nA,2024-01-01,10\nA,2024-01-01,10\nA,2024-01-01,\n",
		OrderOptions{Keys: NewKeys([]string{"A"}), Existing: existing})
	if r.err != nil {
		t.Fatal(r.err)
	}
	if r.sum.Repeats != 1 || r.sum.Accepted != 2 || len(r.sum.RepeatLines) != 1 || r.sum.RepeatLines[0] != 2 {
		t.Errorf("Repeats, Accepted, RepeatLines = %d, %d, %v; want 1, 2, [2]", r.sum.Repeats, r.sum.Accepted, r.sum.RepeatLines)
	}
}

func TestTestdataFiles(t *testing.T) {
	tests := []struct {
		file   string
		opt    OrderOptions
		orders int
	}{
		{"testdata/orders_bom_crlf.csv", OrderOptions{}, 2},
		{"testdata/orders_semicolon.csv", OrderOptions{Columns: Columns{Customer: "Kunde", Date: "Bestelldatum", Amount: "Betrag"}, Dates: DateOptions{Layout: "DD.MM.YYYY"}}, 2},
		{"testdata/orders_tab.csv", OrderOptions{}, 2},
	}
	for _, tt := range tests {
		t.Run(tt.file, func(t *testing.T) {
			b, err := os.ReadFile(tt.file)
			if err != nil {
				t.Fatal(err)
			}
			r := read(t, string(b), tt.opt)
			if r.err != nil || len(r.orders) != tt.orders {
				t.Fatalf("orders, err = %d, %v; want %d, nil", len(r.orders), r.err, tt.orders)
			}
		})
	}
}

func TestParseColumns(t *testing.T) {
	c, err := ParseColumns("customer=client_no, date=Placed At,amount=3")
	if err != nil || c.Customer != "client_no" || c.Date != "Placed At" || c.Amount != "3" || c.Ref != "" {
		t.Errorf("ParseColumns = %+v, %v", c, err)
	}
	for _, bad := range []string{"customer", "buyer=x", "date="} {
		if _, err := ParseColumns(bad); err == nil {
			t.Errorf("ParseColumns(%q) accepted", bad)
		}
	}
	// A column number works where the header name is awkward.
	r := read(t, "a,b\nX,2024-01-01\n", OrderOptions{Columns: Columns{Customer: "1", Date: "2"}})
	if r.err != nil || len(r.orders) != 1 {
		t.Errorf("by number: %v", r.err)
	}
}

func TestLayoutErrors(t *testing.T) {
	for _, layout := range []string{"DD/MM", "YYYY-QQ-DD", "YYYY-MM-DD-DD"} {
		if _, err := newDateParser(DateOptions{Layout: layout}, nil); err == nil {
			t.Errorf("layout %q accepted", layout)
		}
	}
	if _, err := newDateParser(DateOptions{DayFirst: true, MonthFirst: true}, nil); err == nil {
		t.Error("day-first and month-first together accepted")
	}
}

func TestCancel(t *testing.T) {
	var b strings.Builder
	b.WriteString("customer_id,order_date\n")
	for i := 0; i < 20000; i++ {
		b.WriteString("A,2024-01-01\n")
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	_, err := ReadOrders(ctx, strings.NewReader(b.String()), OrderOptions{File: "o.csv", Keys: NewKeys(nil), Today: today}, func(Batch) error { return nil })
	if !errors.Is(err, context.Canceled) {
		t.Errorf("err = %v, want context.Canceled", err)
	}
}
