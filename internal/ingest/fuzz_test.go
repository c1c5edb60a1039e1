package ingest

import (
	"context"
	"errors"
	"strings"
	"testing"
	"time"
)

// FuzzReadOrders feeds arbitrary bytes to the order reader: it must never
// panic, and every rejection must carry at least one located problem.
func FuzzReadOrders(f *testing.F) {
	for _, s := range []string{
		"customer_id,order_date,amount,order_id\nC1,2024-01-05,12.50,A1\n",
		"\xef\xbb\xbfcustomer;date\r\nA;2024-03-10T23:30:00+09:00\r\n",
		"customer_id,order_date\n\"A,\"\"x\",2024-01-01\n",
		"customer\tdate\ttotal\nA\t2024-02-30\t-1\n",
		"",
	} {
		f.Add(s, false)
	}
	tokyo, _ := time.LoadLocation("Asia/Tokyo")
	f.Fuzz(func(t *testing.T, input string, dayFirst bool) {
		opt := OrderOptions{File: "f.csv", Keys: NewKeys(nil), Refs: NewRefSet(), Today: today, Location: tokyo,
			Dates: DateOptions{DayFirst: dayFirst}, Policy: Skip}
		n := 0
		sum, err := ReadOrders(context.Background(), strings.NewReader(input), opt, func(b Batch) error {
			n += len(b.Orders)
			return nil
		})
		var rej *Rejected
		switch {
		case err == nil:
			if n != sum.Accepted || n == 0 && sum.Repeats == 0 {
				t.Fatalf("accepted %d, sink saw %d", sum.Accepted, n)
			}
		case errors.As(err, &rej):
			if len(rej.Problems) == 0 || rej.Problems[0].File != "f.csv" {
				t.Fatalf("rejection without a located problem: %v", err)
			}
		default:
			t.Fatalf("unexpected error kind: %v", err)
		}
	})
}
