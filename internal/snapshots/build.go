package snapshots

import (
	"math"
	"slices"

	"ebb/internal/bgnbd"
	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/problem"
)

// Options configure Build.
type Options struct {
	WindowDays  int          // X: a customer is active at t when recency < X
	HorizonDays int          // H: the label looks at (t, t+H]
	Dates       []civil.Date // snapshot dates, ascending
	// MaxRows caps the rows by keeping all rows of a random share of the
	// customers (0 = no cap): rows of one customer on nearby dates are
	// largely redundant, and sampling by customer keeps each one whole.
	MaxRows int
	Seed    uint64
	// Contacted, when set, reports customers contacted by a published list
	// in (t − H, t]; their rows are left out (their outcome was treated).
	Contacted func(customer int, t civil.Date) bool
	// BGNBD, when set, adds the p_active_bgnbd feature under these
	// parameters, which must come from orders on or before the earliest
	// date (FitBGNBD).
	BGNBD *bgnbd.Params
}

// Table is the snapshot rows: one per (active customer, date), with the
// features column by column (float32, NaN for missing).
type Table struct {
	Names    []string
	Cols     [][]float32
	Label    []uint8 // 1: did not order again within H days; only for labelled dates
	Labelled []bool  // per row: t + H ≤ data_through
	Customer []int32
	Date     []civil.Date
	// RowsBeforeCap counts rows before MaxRows sampled customers; Contacted
	// counts rows left out for a contact in (t − H, t].
	RowsBeforeCap, Contacted int
	SampledShare             float64 // share of customers kept (1 without a cap)
}

// Rows returns the number of rows.
func (t *Table) Rows() int { return len(t.Customer) }

// Build computes the rows of every snapshot date. With a cap it first
// counts the rows, then keeps customers whose keyed hash falls under the
// share that fits, so a customer's rows are all in or all out.
func Build(h *history.History, opt Options) (*Table, error) {
	if opt.WindowDays < 1 || opt.HorizonDays < 1 {
		return nil, problem.New(problem.Invalid, "snapshots need a churn window and a horizon of at least one day; save a churn definition first")
	}
	through := h.DataThrough()
	x := opt.WindowDays
	active := func(c int, t civil.Date) bool {
		n := h.CountThrough(c, t)
		return n > 0 && int(t-h.Days(c)[n-1]) < x
	}
	// Count first: the cap needs the total, and the columns are sized once.
	total := 0
	for _, t := range opt.Dates {
		for c := 0; c < h.Customers(); c++ {
			if active(c, t) {
				total++
			}
		}
	}
	names := Features
	if opt.BGNBD != nil {
		names = append(slices.Clone(Features), FeatureBGNBD)
	}
	tab := &Table{Names: names, RowsBeforeCap: total, SampledShare: 1}
	keep := func(int) bool { return true }
	if opt.MaxRows > 0 && total > opt.MaxRows {
		share := float64(opt.MaxRows) / float64(total)
		tab.SampledShare = share
		limit := ShareLimit(share)
		keep = func(c int) bool { return CustomerHash(opt.Seed, int32(c)) < limit }
	}
	capRows := min(total, max(opt.MaxRows, 0))
	if opt.MaxRows == 0 {
		capRows = total
	}
	tab.Cols = make([][]float32, len(names))
	for j := range tab.Cols {
		tab.Cols[j] = make([]float32, 0, capRows)
	}
	buf := make([]float32, featureCount)
	h2 := civil.Date(opt.HorizonDays)
	for _, t := range opt.Dates {
		labelled := t+h2 <= through
		for c := 0; c < h.Customers(); c++ {
			if !keep(c) || !active(c, t) {
				continue
			}
			if opt.Contacted != nil && opt.Contacted(c, t) {
				tab.Contacted++
				continue
			}
			row(h, c, t, buf)
			for j, v := range buf {
				tab.Cols[j] = append(tab.Cols[j], v)
			}
			if opt.BGNBD != nil {
				tab.Cols[featureCount] = append(tab.Cols[featureCount], pActive(opt.BGNBD, h, c, t))
			}
			var y uint8
			if labelled && h.CountIn(c, t, t+h2) == 0 {
				y = 1
			}
			tab.Label = append(tab.Label, y)
			tab.Labelled = append(tab.Labelled, labelled)
			tab.Customer = append(tab.Customer, int32(c))
			tab.Date = append(tab.Date, t)
		}
	}
	return tab, nil
}

// ShareLimit is the CustomerHash value below which about share (0–1) of
// the customers fall: a sample by keyed hash keeps customer c when
// CustomerHash(seed, c) < ShareLimit(share), so each customer is all in or
// all out, whatever the input order.
func ShareLimit(share float64) uint64 {
	switch v := share * 0x1p64; {
	case !(v > 0):
		return 0
	case v >= 0x1p64:
		return math.MaxUint64
	default:
		return uint64(v)
	}
}

// CustomerHash is SplitMix64 (Steele, Lea & Flood 2014) of a seed and a
// customer id: a keyed hash, used wherever a choice about customers must
// not depend on input order (the row cap's sample, ties in scores).
func CustomerHash(seed uint64, customer int32) uint64 {
	z := seed ^ (uint64(customer) + 0x9e3779b97f4a7c15)
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}
