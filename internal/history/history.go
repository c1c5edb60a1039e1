package history

import (
	"unsafe"

	"ebb/internal/civil"
)

// History is one dataset version's orders in columnar form, read-only after
// Build and safe for concurrent readers. See the package documentation for
// the layout.
//
// Methods taking a customer id c panic, like a slice index, unless
// 0 ≤ c < Customers().
type History struct {
	start   []int32      // len customers+1: customer c's order days are days[start[c]:start[c+1]]
	days    []civil.Date // ascending and distinct within each customer
	amounts []float32    // parallel to days; nil when no order had an amount; NaN when none of the day's orders had one
	orders  int          // raw orders before same-day orders were merged

	first, last civil.Date // over all order days; zero when there are none
	dataThrough civil.Date
}

// Customers returns the number of customers, those without orders included;
// customer ids run from 0 to Customers()−1.
func (h *History) Customers() int { return len(h.start) - 1 }

// OrderDays returns the total number of order days: distinct (customer,
// day) pairs.
func (h *History) OrderDays() int { return len(h.days) }

// Orders returns the number of raw orders, before orders of one customer on
// one day were merged into an order day.
func (h *History) Orders() int { return h.orders }

// Days returns customer c's order days, ascending and distinct; empty for a
// customer without orders. The slice shares the History's memory: callers
// must not modify it (its capacity ends with the customer's run, so an
// append copies rather than overwrites the next customer).
func (h *History) Days(c int) []civil.Date {
	lo, hi := h.start[c], h.start[c+1]
	return h.days[lo:hi:hi]
}

// Amounts returns the amounts of customer c's order days, parallel to
// Days(c): each the sum of the amounts of that day's orders that had one,
// NaN when none of them had one. It returns nil for every customer when
// HasAmounts is false. Like Days, the slice must not be modified.
func (h *History) Amounts(c int) []float32 {
	if h.amounts == nil {
		return nil
	}
	lo, hi := h.start[c], h.start[c+1]
	return h.amounts[lo:hi:hi]
}

// HasAmounts reports whether any order had an amount. Without amounts,
// Amounts returns nil and AmountIn 0: spend features are then 0 and
// mean order values missing (DESIGN.md §1, features).
func (h *History) HasAmounts() bool { return h.amounts != nil }

// First returns the earliest order day of any customer; the zero Date
// (1970-01-01) when there are no orders, so check OrderDays first.
func (h *History) First() civil.Date { return h.first }

// Last returns the latest order day of any customer; the zero Date when
// there are no orders.
func (h *History) Last() civil.Date { return h.last }

// DataThrough returns the last day the orders are complete for, as given to
// Build (the dataset's data_through, or its latest order day). It may be
// before Last when the analyst chose an earlier day; the orders after it
// are kept, and each analysis decides whether to read them.
func (h *History) DataThrough() civil.Date { return h.dataThrough }

// WithDataThrough returns a History sharing h's orders with another
// DataThrough: the analyst may change a dataset's data_through after its
// history was loaded and cached, and this costs a struct copy, not a
// reload.
func (h *History) WithDataThrough(d civil.Date) *History {
	c := *h
	c.dataThrough = d
	return &c
}

// CountThrough returns the number of customer c's order days on or before
// t, so that Days(c)[:n] and Amounts(c)[:n] are the customer's history as
// of t (the order days ≤ t of the features in DESIGN.md §1).
func (h *History) CountThrough(c int, t civil.Date) int {
	return upper(h.Days(c), t)
}

// LastOnOrBefore returns customer c's last order day on or before t, and
// false when the customer has none (no orders, or all after t). Recency at
// t is then t minus that day, in days.
func (h *History) LastOnOrBefore(c int, t civil.Date) (civil.Date, bool) {
	ds := h.Days(c)
	i := upper(ds, t)
	if i == 0 {
		return 0, false
	}
	return ds[i-1], true
}

// CountIn returns the number of customer c's order days d with
// from < d ≤ to: the order_days_k feature at t is CountIn(c, t−k, t). It is
// 0 when to ≤ from.
func (h *History) CountIn(c int, from, to civil.Date) int {
	if to <= from {
		return 0
	}
	ds := h.Days(c)
	return upper(ds, to) - upper(ds, from)
}

// AmountIn returns the sum of the amounts of customer c's order days d with
// from < d ≤ to, skipping days without an amount; 0 when there are none,
// when to ≤ from, or when HasAmounts is false. The sum is taken in float64
// over the float32 day amounts.
func (h *History) AmountIn(c int, from, to civil.Date) float64 {
	if h.amounts == nil || to <= from {
		return 0
	}
	lo, hi := h.start[c], h.start[c+1]
	ds := h.days[lo:hi]
	as := h.amounts[lo:hi]
	sum := 0.0
	for _, a := range as[upper(ds, from):upper(ds, to)] {
		if a == a { // not NaN
			sum += float64(a)
		}
	}
	return sum
}

// Bytes returns the memory the History holds, in bytes: its struct and the
// capacity of its three slices (no other memory is reachable from it).
func (h *History) Bytes() int {
	return int(unsafe.Sizeof(*h)) +
		cap(h.start)*int(unsafe.Sizeof(int32(0))) +
		cap(h.days)*int(unsafe.Sizeof(civil.Date(0))) +
		cap(h.amounts)*int(unsafe.Sizeof(float32(0)))
}

// upper returns the number of days in ds (ascending) that are ≤ t: the
// index of the first day after t.
func upper(ds []civil.Date, t civil.Date) int {
	lo, hi := 0, len(ds)
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if ds[m] <= t {
			lo = m + 1
		} else {
			hi = m
		}
	}
	return lo
}
