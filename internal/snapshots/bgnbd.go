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

// FitBGNBD fits BG/NBD on every customer's order days up to through (the
// earliest snapshot date that will use the parameters), so the feature at
// any later date reads nothing from after its own date. Customers whose
// first order is on through itself have no age yet and are left out.
func FitBGNBD(h *history.History, through civil.Date) (bgnbd.Params, bgnbd.FitInfo, error) {
	var cs []bgnbd.Customer
	for c := 0; c < h.Customers(); c++ {
		if s, ok := summary(h, c, through); ok && s.T > 0 {
			cs = append(cs, s)
		}
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
