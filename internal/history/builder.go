package history

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"

	"ebb/internal/civil"
)

// Builder collects raw orders in any order and builds a History from them.
// It is for one goroutine and one Build.
type Builder struct {
	customers  int
	rows       []row
	hasAmounts bool
	err        error // the first bad row; Build returns it
	built      bool
}

// row is one raw order: 16 bytes. amount is NaN when the order had none.
type row struct {
	customer int32
	day      civil.Date
	amount   float64
}

// NewBuilder returns a Builder for customers customers (ids 0 to
// customers−1) expecting about sizeHint orders; a good hint saves the
// slice growth, a wrong one costs only that.
func NewBuilder(customers int, sizeHint int) *Builder {
	return &Builder{customers: customers, rows: make([]row, 0, max(sizeHint, 0))}
}

// Add records one order of customer on day, with its amount when hasAmount
// is true (amount is ignored otherwise). Rows may come in any order, and
// one customer may order several times on one day. A customer id outside 0
// to customers−1 or an amount that is not a finite float32 (NaN, ±Inf,
// beyond ±3.4e38) is bad data: the row is dropped and Build reports the
// first such row.
func (b *Builder) Add(customer int32, day civil.Date, amount float64, hasAmount bool) {
	if b.err != nil {
		return
	}
	if customer < 0 || int(customer) >= b.customers {
		b.err = fmt.Errorf("an order of customer %d on %s: not a customer (ids 0 to %d)", customer, day, b.customers-1)
		return
	}
	if !hasAmount {
		amount = math.NaN()
	} else if math.IsNaN(amount) || math.IsInf(float64(float32(amount)), 0) {
		b.err = fmt.Errorf("an order of customer %d on %s: amount %v is not a finite number", customer, day, amount)
		return
	} else {
		b.hasAmounts = true
	}
	b.rows = append(b.rows, row{customer: customer, day: day, amount: amount})
}

// Build returns the History of the rows added, with dataThrough as its
// DataThrough. It fails when a row was bad (see Add), when the Builder had
// a negative customer count, or on a second call: the Builder hands its
// memory over to the History and cannot be reused.
func (b *Builder) Build(dataThrough civil.Date) (*History, error) {
	if b.built {
		return nil, errors.New("build history: Build was called before on this Builder")
	}
	b.built = true
	rows := b.rows
	b.rows = nil // the rows die with this call
	switch {
	case b.err != nil:
		return nil, fmt.Errorf("build history: %w", b.err)
	case b.customers < 0:
		return nil, fmt.Errorf("build history: %d customers", b.customers)
	case len(rows) > math.MaxInt32:
		return nil, fmt.Errorf("build history: %d orders, at most %d fit", len(rows), math.MaxInt32)
	}
	n, customers := len(rows), b.customers

	// Counting sort by customer: start[c] is where customer c's rows begin.
	start := make([]int32, customers+1)
	for _, r := range rows {
		start[r.customer+1]++
	}
	for c := 1; c <= customers; c++ {
		start[c] += start[c-1]
	}
	next := slices.Clone(start[:customers])
	days := make([]civil.Date, n)
	var amts []float64
	if b.hasAmounts {
		amts = make([]float64, n)
	}
	for _, r := range rows {
		i := next[r.customer]
		next[r.customer]++
		days[i] = r.day
		if amts != nil {
			amts[i] = r.amount
		}
	}
	rows, next = nil, nil

	// Sort each customer's days and merge same-day orders, compacting all
	// runs towards the front: w (the write position) never passes the read
	// position, so one slice serves as input and output.
	h := &History{orders: n, dataThrough: dataThrough}
	var scratch []pair
	w := int32(0)
	for c := range customers {
		lo, hi := start[c], start[c+1]
		start[c] = w
		if lo == hi {
			continue
		}
		if amts != nil {
			sortDaysAmounts(days[lo:hi], amts[lo:hi], &scratch)
		} else {
			sortDays(days[lo:hi])
		}
		first := w
		for i := lo; i < hi; i++ {
			if w > first && days[i] == days[w-1] {
				if amts != nil {
					amts[w-1] = addAmount(amts[w-1], amts[i])
				}
				continue
			}
			days[w] = days[i]
			if amts != nil {
				amts[w] = amts[i]
			}
			w++
		}
		if first == 0 || days[first] < h.first {
			h.first = days[first]
		}
		if first == 0 || days[w-1] > h.last {
			h.last = days[w-1]
		}
	}
	start[customers] = w

	h.start = start
	h.days = days[:w:w]
	if int(w) < n { // release the merged-away tail
		h.days = make([]civil.Date, w)
		copy(h.days, days)
	}
	if amts != nil {
		h.amounts = make([]float32, w)
		for i, a := range amts[:w] {
			f := float32(a)
			if math.IsInf(float64(f), 0) {
				return nil, fmt.Errorf("build history: the orders of one customer on %s add up to %v, beyond float32", days[i], a)
			}
			h.amounts[i] = f
		}
	}
	return h, nil
}

// addAmount adds amount b to a day's sum a, where NaN means "no amount".
func addAmount(a, b float64) float64 {
	switch {
	case math.IsNaN(b):
		return a
	case math.IsNaN(a):
		return b
	}
	return a + b
}

// insertionMax is the longest run sorted by insertion. Most customers have
// a handful of order days, and an already-sorted run of any length costs
// one comparison a day.
const insertionMax = 24

// sortDays sorts one customer's days.
func sortDays(ds []civil.Date) {
	if slices.IsSorted(ds) {
		return
	}
	if len(ds) > insertionMax {
		slices.Sort(ds)
		return
	}
	for i := 1; i < len(ds); i++ {
		for j := i; j > 0 && ds[j] < ds[j-1]; j-- {
			ds[j], ds[j-1] = ds[j-1], ds[j]
		}
	}
}

type pair struct {
	day    civil.Date
	amount float64
}

// sortDaysAmounts sorts one customer's days with their amounts alongside;
// runs too long for insertion go through *scratch, which is reused.
func sortDaysAmounts(ds []civil.Date, as []float64, scratch *[]pair) {
	if slices.IsSorted(ds) {
		return
	}
	if len(ds) <= insertionMax {
		for i := 1; i < len(ds); i++ {
			for j := i; j > 0 && ds[j] < ds[j-1]; j-- {
				ds[j], ds[j-1] = ds[j-1], ds[j]
				as[j], as[j-1] = as[j-1], as[j]
			}
		}
		return
	}
	ps := (*scratch)[:0]
	for i, d := range ds {
		ps = append(ps, pair{d, as[i]})
	}
	slices.SortFunc(ps, func(a, b pair) int { return cmp.Compare(a.day, b.day) })
	for i, p := range ps {
		ds[i], as[i] = p.day, p.amount
	}
	*scratch = ps
}
