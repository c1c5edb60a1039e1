package demo

import (
	"math"
	"testing"
	"time"
)

// Treat gives about WinBackRate of the contacted customers one extra order
// inside the horizon, never after End, the same for the same list.
func TestTreat(t *testing.T) {
	b := Generate(Options{})
	var keys []string
	for _, c := range b.Customers {
		keys = append(keys, c.Key)
	}
	day := time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC)
	extra := b.Treat(keys, day, 90, 7)
	n := float64(len(keys))
	if sd := math.Sqrt(n * WinBackRate * (1 - WinBackRate)); math.Abs(float64(len(extra))-n*WinBackRate) > 4*sd {
		t.Errorf("%d extra orders for %d customers, want about %.0f", len(extra), len(keys), n*WinBackRate)
	}
	seen := map[string]bool{}
	for i, o := range extra {
		if !o.Date.After(day) || o.Date.After(day.AddDate(0, 0, 90)) || o.Date.After(b.End) || o.Amount < minAmount {
			t.Fatalf("extra order %+v outside (%s, +90 days] or without an amount", o, day.Format(time.DateOnly))
		}
		if seen[o.CustomerKey] || seen[o.ID] {
			t.Fatalf("customer or id repeated: %+v", o)
		}
		seen[o.CustomerKey], seen[o.ID] = true, true
		if i > 0 && o.Date.Before(extra[i-1].Date) {
			t.Fatal("extra orders not sorted by date")
		}
	}
	again := b.Treat(keys, day, 90, 7)
	if len(again) != len(extra) || (len(extra) > 0 && again[0] != extra[0]) {
		t.Error("the same list treated twice gives different orders")
	}
	late := b.Treat(keys, b.End.AddDate(0, 0, -10), 90, 7)
	for _, o := range late {
		if o.Date.After(b.End) {
			t.Fatalf("extra order %v after End", o.Date)
		}
	}
}
