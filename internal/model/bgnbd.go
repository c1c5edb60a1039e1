package model

import (
	"fmt"
	"math"

	"ebb/internal/bgnbd"
	"ebb/internal/frame"
)

// BG/NBD reads a customer's purchase summary from these snapshot columns:
// x = order_days_total − 1 repeat order days, age T = tenure_days and the
// last repeat at t_x = T − recency_days, all in days.
const (
	colTotal   = "order_days_total"
	colTenure  = "tenure_days"
	colRecency = "recency_days"
)

// BGNBD scores P(no order day in the next HorizonDays) from the BG/NBD
// model (Fader, Hardie & Lee 2005) with parameters fitted elsewhere, on
// orders on or before FittedThrough.
type BGNBD struct {
	Params        bgnbd.Params `json:"params"`
	HorizonDays   float64      `json:"horizon_days"`
	FittedThrough string       `json:"fitted_through"` // YYYY-MM-DD
}

func (b *BGNBD) validate() error {
	if err := b.Params.Validate(); err != nil {
		return err
	}
	if !(b.HorizonDays > 0) || math.IsInf(b.HorizonDays, 0) {
		return fmt.Errorf("BG/NBD: horizon %v days, want > 0", b.HorizonDays)
	}
	return nil
}

// Score returns P(no order day within the horizon) for every row of f into
// dst (reused when it has room). A customer whose first order is on the
// snapshot date (age 0) is alive for certain, so the probability is the
// gamma–Poisson one, (α/(α+H))^r. A row with an impossible summary scores
// NaN.
func (b *BGNBD) Score(f *frame.Frame, dst []float64) ([]float64, error) {
	var cols [3][]float64
	for i, name := range []string{colTotal, colTenure, colRecency} {
		c, ok := f.Col(name)
		if !ok {
			return nil, fmt.Errorf("BG/NBD: frame has no column %q", name)
		}
		cols[i] = c
	}
	dst = grow(dst, f.Rows())
	p, h := b.Params, b.HorizonDays
	fresh := math.Exp(p.R * math.Log(p.Alpha/(p.Alpha+h)))
	for i := range dst {
		// Clamped to a possible summary: at least one order day, the last
		// no earlier than the first (occlusion can mix customers' values).
		n, age, rec := max(cols[0][i], 1), max(cols[1][i], 0), max(cols[2][i], 0)
		rec = min(rec, age)
		if age == 0 {
			dst[i] = fresh
			continue
		}
		x := int(n) - 1
		tx := age - rec
		if x == 0 {
			tx = 0
		}
		dst[i] = bgnbd.PNoPurchase(p, bgnbd.Customer{X: x, Tx: tx, T: age}, h)
	}
	return dst, nil
}

// BGNBDFeatures are the columns a BG/NBD model reads.
var BGNBDFeatures = []string{colTotal, colTenure, colRecency}

// NewBGNBD returns the uncalibrated BG/NBD model with the given parameters
// and horizon.
func NewBGNBD(p bgnbd.Params, horizonDays float64, fittedThrough string) (*Model, error) {
	b := &BGNBD{Params: p, HorizonDays: horizonDays, FittedThrough: fittedThrough}
	if err := b.validate(); err != nil {
		return nil, err
	}
	return &Model{Kind: KindBGNBD, Features: append([]string(nil), BGNBDFeatures...), BGNBD: b}, nil
}
