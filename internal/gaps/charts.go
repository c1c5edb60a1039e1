package gaps

import (
	"math"

	"ebb/internal/history"
	"ebb/internal/survival"
)

// CurvePoint is the repurchase curve F(t) = 1 − S(t) at one event time,
// with its pointwise 95% interval (from the log interval of S).
type CurvePoint struct {
	Days  float64 `json:"days"`
	Share float64 `json:"share"`
	Lower float64 `json:"lower"`
	Upper float64 `json:"upper"`
}

// Figures are what the window page draws: the pooled gaps of the look-back
// by length, and the censoring-aware repurchase curve up to the cap.
type Figures struct {
	// GapCounts[d] is the number of gaps of d days between consecutive
	// order days in the look-back, for d < len; the last entry also holds
	// all longer gaps.
	GapCounts  []int        `json:"gap_counts"`
	Repurchase []CurvePoint `json:"repurchase"`
	CapDays    int          `json:"cap_days"`
	// CapShare is F(τ): the share of episodes ended by a reorder within the
	// cap, which the censoring-aware X takes its percentile of.
	CapShare float64 `json:"cap_share"`
}

// maxHistDays bounds the gap histogram; longer gaps share its last bin.
const maxHistDays = 730

// Chart computes the figures of the window page.
func Chart(h *history.History, opt Options) (Figures, error) {
	opt = opt.Resolved()
	if err := opt.check(); err != nil {
		return Figures{}, err
	}
	l := newLookback(h, opt.LookbackDays)
	f := Figures{GapCounts: make([]int, maxHistDays+1), CapDays: opt.CapDays}
	for c := 0; c < h.Customers(); c++ {
		days := l.inL(h.Days(c))
		for i := 1; i < len(days); i++ {
			f.GapCounts[min(int(days[i]-days[i-1]), maxHistDays)]++
		}
	}
	var w Window
	_, eps := censoredEpisodes(h, l, false, &w)
	var b survival.Builder
	for _, e := range eps {
		b.Add(int(e.days), e.event)
	}
	cv := b.Curve()
	f.CapShare = cv.CDF(float64(opt.CapDays))
	for _, r := range cv.Rows() {
		if r.Time > float64(opt.CapDays) {
			break
		}
		p := CurvePoint{Days: r.Time, Share: 1 - r.Surv, Lower: 1 - r.Upper, Upper: 1 - r.Lower}
		if math.IsNaN(p.Lower) {
			p.Lower = p.Share
		}
		if math.IsNaN(p.Upper) {
			p.Upper = p.Share
		}
		f.Repurchase = append(f.Repurchase, p)
	}
	return f, nil
}
