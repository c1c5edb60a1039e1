package snapshots

import (
	"ebb/internal/bgnbd"
	"ebb/internal/civil"
	"ebb/internal/history"
)

// FeatureBGNBD is the name of the BG/NBD feature: P(active at t) under
// parameters fitted on orders on or before the earliest snapshot date.
const FeatureBGNBD = "p_active_bgnbd"

// summary is customer c's BG/NBD summary at t in order days: repeat order
// days, the day of the last one and the age, all measured from the first.
// ok is false before the customer's first order.
func summary(h *history.History, c int, t civil.Date) (bgnbd.Customer, bool) {
	n := h.CountThrough(c, t)
	if n == 0 {
		return bgnbd.Customer{}, false
	}
	days := h.Days(c)
	first := days[0]
	return bgnbd.Customer{X: n - 1, Tx: float64(days[n-1] - first), T: float64(t - first)}, true
}

// FitBGNBD fits BG/NBD on customers' order days up to through (the
// earliest snapshot date that will use the parameters), so the feature at
// any later date reads nothing from after its own date. Customers whose
// first order is on through itself have no age yet and are left out.
//
// When maxCustomers > 0 and more customers qualify, the fit uses a sample
// of about maxCustomers of them chosen by a keyed hash of the customer
// (CustomerHash with seed): the four parameters describe the population,
// and maximum likelihood on a uniform sample estimates them consistently,
// at a fraction of the cost at 200k customers.
func FitBGNBD(h *history.History, through civil.Date, maxCustomers int, seed uint64) (bgnbd.Params, bgnbd.FitInfo, error) {
	var ids []int32
	var cs []bgnbd.Customer
	for c := 0; c < h.Customers(); c++ {
		if s, ok := summary(h, c, through); ok && s.T > 0 {
			ids, cs = append(ids, int32(c)), append(cs, s)
		}
	}
	if maxCustomers > 0 && len(cs) > maxCustomers {
		limit := ShareLimit(float64(maxCustomers) / float64(len(cs)))
		kept := cs[:0]
		for i, c := range ids {
			if CustomerHash(seed, c) < limit {
				kept = append(kept, cs[i])
			}
		}
		cs = kept
	}
	return bgnbd.Fit(cs, bgnbd.FitOptions{})
}

// pActive is the feature's value for customer c at t: 1 for a customer
// whose first order is at t (no age yet, and BG/NBD's P(alive) with no
// repeat is 1).
func pActive(p *bgnbd.Params, h *history.History, c int, t civil.Date) float32 {
	s, ok := summary(h, c, t)
	if !ok || s.T <= 0 {
		return 1
	}
	return float32(bgnbd.PAlive(*p, s))
}
