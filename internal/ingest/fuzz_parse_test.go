package ingest

import (
	"fmt"
	"strconv"
	"strings"
	"testing"
	"time"

	"ebb/internal/civil"
)

// FuzzParseDate feeds arbitrary fields and layouts to the date parser. It
// must never panic; a layout it refuses gets a message; a field it refuses
// gets a message that quotes the field; an accepted ISO date without a
// time is that very day; an ISO timestamp with an offset lands within a
// day of its written date; and a day written in the chosen layout reads
// back as the same day.
func FuzzParseDate(f *testing.F) {
	for _, s := range []struct {
		field, layout string
		mode          uint8
		day           int32
	}{
		{"2024-03-14", "", 0, 19796},
		{"2024-03-14T23:30:00+09:00", "", 0, 0},
		{"2024-03-14 07:05:09.123Z", "", 0, 1},
		{"14/03/2024", "", 1, -1},
		{"3/14/2024 9:05", "", 2, 400000},
		{"14.03.2024 18:00", "DD.MM.YYYY hh:mm", 0, 20000},
		{"14-Mar-2024", "DD-MMM-YYYY", 0, 3},
		{"2024-02-30", "", 0, 5},
		{"2024-13-01T25:00", "", 0, 6},
		{"03/04/2024", "", 0, 7},
		{"", "YYYYMMDD", 3, 8},
		{"20240314", "YYYYMMDDhhmmss", 0, 9},
		{"x", "DD/MM", 0, 10},
		{"2024-03-14T12:00:00+24:00", "", 0, 11},
	} {
		f.Add(s.field, s.layout, s.mode, s.day)
	}
	tokyo, err := time.LoadLocation("Asia/Tokyo")
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, field, layout string, mode uint8, day int32) {
		if len(field) > 512 || len(layout) > 64 {
			return
		}
		opt := DateOptions{Layout: layout, DayFirst: mode&1 != 0, MonthFirst: mode&2 != 0}
		loc := time.UTC
		if mode&4 != 0 {
			loc = tokyo
		}
		p, err := newDateParser(opt, loc)
		if err != nil {
			if err.Error() == "" {
				t.Fatalf("newDateParser(%+v) refused without a message", opt)
			}
			return
		}
		d, msg := p.parse(field)
		if msg != "" {
			if !strings.Contains(msg, strconv.Quote(field)) {
				t.Fatalf("parse(%q) with %+v: message %q does not quote the field", field, opt, msg)
			}
		} else {
			y, m, dd := d.YMD()
			if !civil.Valid(y, m, dd) {
				t.Fatalf("parse(%q) with %+v = %v, not a calendar day", field, opt, d)
			}
			if layout == "" && len(field) == 10 && field[4] == '-' && d.String() != field {
				t.Fatalf("parse(%q) with %+v = %v, want the same day", field, opt, d)
			}
			if layout == "" && len(field) > 10 && field[4] == '-' && field[7] == '-' {
				written, err := civil.Parse(field[:10])
				if err == nil && (d < written-1 || d > written+1) {
					t.Fatalf("parse(%q) with %+v = %v, more than a day from %v", field, opt, d, written)
				}
			}
		}
		// A day between years 1000 and 9999 written in the layout reads back.
		if p.layout == nil {
			return
		}
		want := civil.FromYMD(1000, 1, 1) + civil.Date(int64(day)%3_000_000+3_000_000)%civil.Date(civil.FromYMD(9999, 12, 31)-civil.FromYMD(1000, 1, 1))
		got, msg := p.parse(formatLayout(p.layout, want))
		if msg != "" || got != want {
			t.Fatalf("layout %q: %v written as %q reads back as %v (%s)", layout, want, formatLayout(p.layout, want), got, msg)
		}
	})
}

// formatLayout writes d in a compiled layout (times as 12:34:56).
func formatLayout(toks []token, d civil.Date) string {
	y, m, day := d.YMD()
	var b strings.Builder
	for _, tk := range toks {
		switch tk.kind {
		case tokLiteral:
			b.WriteByte(tk.lit)
		case tokYear:
			fmt.Fprintf(&b, "%04d", y)
		case tokMonth:
			fmt.Fprintf(&b, "%02d", m)
		case tokMonthName:
			b.WriteString(monthNames[m-1])
		case tokDay:
			fmt.Fprintf(&b, "%02d", day)
		case tokHour:
			b.WriteString("12")
		case tokMinute:
			b.WriteString("34")
		case tokSecond:
			b.WriteString("56")
		}
	}
	return b.String()
}

// FuzzMapColumns fuzzes the column mapping text (ParseColumns), the
// mapping of a header to field positions (resolve) and the upload
// preview's guesses (Sniff). A refused mapping names the part it refuses;
// a resolved mapping gives the customer and the date a column each and
// never one column to two fields; a named column resolves to a header of
// that name or to that column number; Sniff's guesses are header names.
func FuzzMapColumns(f *testing.F) {
	for _, s := range [][2]string{
		{"customer=client_no,date=when", "client_no,when,total"},
		{"", "customer_id,order_date,amount,order_id"},
		{"customer=1,date=2", "a;b;c"},
		{"customer=Customer ID,date=order-date", "Customer ID,Order Date,Amount"},
		{"customer=a,date=a", "a,b"},
		{"amount=3,ref=3", "customer,date,x"},
		{"colour=red", "customer,date"},
		{"customer", "customer,date"},
		{" CUSTOMER = x ,date= y", "x,y"},
		{"customer=0,date=-1", "\"quoted,name\",date\r\n"},
	} {
		f.Add(s[0], s[1])
	}
	f.Fuzz(func(t *testing.T, mapping, header string) {
		if len(mapping) > 1024 || len(header) > 4096 {
			return
		}
		cols, err := ParseColumns(mapping)
		if err != nil {
			if !strings.Contains(err.Error(), "column mapping") {
				t.Fatalf("ParseColumns(%q) error %q does not name the mapping", mapping, err)
			}
			cols = Columns{}
		}
		for _, v := range []string{cols.Customer, cols.Date, cols.Amount, cols.Ref} {
			if v != strings.TrimSpace(v) {
				t.Fatalf("ParseColumns(%q) kept spaces around %q", mapping, v)
			}
		}
		fields := strings.Split(header, ",")
		if len(fields) > 64 {
			fields = fields[:64]
		}
		ix, msg := resolve(fields, cols)
		if msg == "" {
			pos := []int{ix.customer, ix.date, ix.amount, ix.ref}
			for i, p := range pos {
				if p < -1 || p >= len(fields) || i < 2 && p < 0 {
					t.Fatalf("resolve(%q, %+v) = %+v: position out of range", fields, cols, ix)
				}
				for _, q := range pos[:i] {
					if p >= 0 && p == q {
						t.Fatalf("resolve(%q, %+v) = %+v: one column for two fields", fields, cols, ix)
					}
				}
			}
			for _, c := range []struct {
				name string
				at   int
			}{{cols.Customer, ix.customer}, {cols.Date, ix.date}, {cols.Amount, ix.amount}, {cols.Ref, ix.ref}} {
				if c.name == "" || normalise(fields[c.at]) == normalise(c.name) {
					continue
				}
				if k, err := strconv.Atoi(c.name); err != nil || k != c.at+1 {
					t.Fatalf("resolve(%q, %+v): %q resolved to column %d (%q)", fields, cols, c.name, c.at+1, fields[c.at])
				}
			}
		} else if !strings.Contains(msg, "column") {
			t.Fatalf("resolve(%q, %+v) message %q does not mention a column", fields, cols, msg)
		}
		p, err := Sniff(strings.NewReader(header+"\nA,2024-01-01\n"), 5)
		if err != nil {
			return
		}
		for _, g := range []string{p.Columns.Customer, p.Columns.Date, p.Columns.Amount, p.Columns.Ref} {
			found := g == ""
			for _, h := range p.Header {
				found = found || h == g
			}
			if !found {
				t.Fatalf("Sniff(%q) guessed %q, not a header name (%q)", header, g, p.Header)
			}
		}
	})
}
