package ingest

import (
	"strings"
	"testing"
)

func TestSniff(t *testing.T) {
	tests := []struct {
		name     string
		input    string
		delim    byte
		customer string
		date     string
		amount   string
		ref      string
		dates    DateStyle
		wantRows int
	}{
		{"iso comma", "customer_id,order_date,amount,order_id\nA,2024-01-02,1,R1\nB,2024-01-03T10:00:00Z,2,R2\n", ',', "customer_id", "order_date", "amount", "order_id", DatesISO, 2},
		{"day-first proven by a 13th", "Customer;Date;Total\nA;03/04/2024;1\nB;13/04/2024;2\n", ';', "Customer", "Date", "Total", "", DatesDayFirst, 2},
		{"month-first proven by a 13th", "client\tpurchase_date\nA\t04/13/2024\nB\t04/03/2024\n", '\t', "client", "purchase_date", "", "", DatesMonthFirst, 2},
		{"ambiguous slash dates", "customer,date\nA,03/04/2024\nB,04/05/2024 10:00\n", ',', "customer", "date", "", "", DatesAmbiguous, 2},
		{"iso with an impossible day is still iso", "customer_id,order_date\nA,2024-02-30\nB,2024-03-01\n", ',', "customer_id", "order_date", "", "", DatesISO, 2},
		{"unknown layout", "customer,date\nA,14 Mar 2024\n", ',', "customer", "date", "", "", DatesUnknown, 1},
		{"no usual names", "who,when\nA,2024-01-01\n", ',', "", "", "", "", DatesUnknown, 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p, err := Sniff(strings.NewReader(tt.input), 5)
			if err != nil {
				t.Fatal(err)
			}
			if p.Delimiter != tt.delim || p.Columns.Customer != tt.customer || p.Columns.Date != tt.date ||
				p.Columns.Amount != tt.amount || p.Columns.Ref != tt.ref || p.Dates != tt.dates || len(p.Rows) != tt.wantRows {
				t.Errorf("Sniff = delim %q cols %+v dates %s rows %d; want %q {%s %s %s %s} %s %d",
					p.Delimiter, p.Columns, p.Dates, len(p.Rows), tt.delim, tt.customer, tt.date, tt.amount, tt.ref, tt.dates, tt.wantRows)
			}
		})
	}
	if _, err := Sniff(strings.NewReader(""), 5); err == nil {
		t.Error("Sniff of an empty file succeeded")
	}
}
