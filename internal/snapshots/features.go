package snapshots

import (
	"math"

	"ebb/internal/civil"
	"ebb/internal/history"
)

// Feature names, as in ebb's design ("Snapshots, features and the split").
// Every one reads only order days on or before the snapshot date t; windows
// are (t−k, t]. NaN marks a missing value.
var Features = []string{
	"recency_days",     // t − last order day ≤ t
	"order_days_30",    // order days in (t−30, t]
	"order_days_90",    //
	"order_days_180",   //
	"order_days_365",   //
	"order_days_total", // order days ≤ t
	"tenure_days",      // t − first order day
	"mean_gap_days",    // (last − first) / (order days − 1); missing with one order day
	"last_gap_days",    // gap between the last two order days; missing with one
	"recency_over_gap", // recency_days / mean_gap_days; missing with one order day
	"spend_180",        // amount in (t−180, t]; 0 without amounts
	"mean_order_value", // amount ≤ t / order days ≤ t; missing without amounts
	"order_trend",      // order_days_180 − order days in (t−360, t−180]
}

// featureCount is len(Features).
const featureCount = 13

// row computes customer c's features at t into out (len featureCount) and
// reports whether c had an order day on or before t. It allocates nothing.
func row(h *history.History, c int, t civil.Date, out []float32) (recency int, ok bool) {
	days := h.Days(c)
	n := h.CountThrough(c, t)
	if n == 0 {
		return 0, false
	}
	first, last := days[0], days[n-1]
	r := int(t - last)
	nan := float32(math.NaN())
	out[0] = float32(r)
	out[1] = float32(h.CountIn(c, t-30, t))
	out[2] = float32(h.CountIn(c, t-90, t))
	d180 := h.CountIn(c, t-180, t)
	out[3] = float32(d180)
	out[4] = float32(h.CountIn(c, t-365, t))
	out[5] = float32(n)
	out[6] = float32(t - first)
	if n >= 2 {
		mean := float64(last-first) / float64(n-1)
		out[7] = float32(mean)
		out[8] = float32(last - days[n-2])
		out[9] = float32(float64(r) / mean)
	} else {
		out[7], out[8], out[9] = nan, nan, nan
	}
	out[10], out[11] = 0, nan
	if h.HasAmounts() {
		out[10] = float32(h.AmountIn(c, t-180, t))
		// Missing unless at least one order day up to t had an amount.
		for _, a := range h.Amounts(c)[:n] {
			if a == a {
				out[11] = float32(h.AmountIn(c, first-1, t) / float64(n))
				break
			}
		}
	}
	out[12] = float32(d180 - h.CountIn(c, t-360, t-180))
	return r, true
}
