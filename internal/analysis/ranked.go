package analysis

import (
	"encoding/binary"
	"fmt"
	"math"
	"slices"

	"ebb/internal/evaluate"
	"ebb/internal/problem"
)

// A ranked list is stored as one record of 5 bytes per customer, in list
// order: the float32 score (little endian) and the label (0 or 1).
const rankedRecord = 5

// encodeRanked orders one date's customers as a list is drawn (score
// descending, ties by the keyed hash) and encodes them.
func encodeRanked(scores []float64, labels []bool, keys []uint64) []byte {
	idx := make([]int, len(scores))
	for i := range idx {
		idx[i] = i
	}
	slices.SortFunc(idx, func(a, b int) int {
		switch {
		case scores[a] > scores[b]:
			return -1
		case scores[a] < scores[b]:
			return 1
		case keys[a] < keys[b]:
			return -1
		case keys[a] > keys[b]:
			return 1
		}
		return 0
	})
	out := make([]byte, rankedRecord*len(idx))
	for k, i := range idx {
		binary.LittleEndian.PutUint32(out[k*rankedRecord:], math.Float32bits(float32(scores[i])))
		if labels[i] {
			out[k*rankedRecord+4] = 1
		}
	}
	return out
}

// Ranked is a decoded ranking of one date: cumulative positives by list
// position, and the scores in list order.
type Ranked struct {
	Scores []float32
	CumPos []int // CumPos[k] = positives among the first k customers
}

// DecodeRanked reads a stored ranking.
func DecodeRanked(data []byte) (Ranked, error) {
	if len(data)%rankedRecord != 0 {
		return Ranked{}, fmt.Errorf("ranked list of %d bytes is not whole records", len(data))
	}
	n := len(data) / rankedRecord
	r := Ranked{Scores: make([]float32, n), CumPos: make([]int, n+1)}
	for k := 0; k < n; k++ {
		r.Scores[k] = math.Float32frombits(binary.LittleEndian.Uint32(data[k*rankedRecord:]))
		r.CumPos[k+1] = r.CumPos[k] + int(data[k*rankedRecord+4])
	}
	return r, nil
}

// ListAt returns the list of the k highest-ranked customers.
func (r Ranked) ListAt(k int) evaluate.List {
	n := len(r.Scores)
	k = max(0, min(k, n))
	l := evaluate.List{Size: k, Positives: r.CumPos[k], Scored: n, AllPositives: r.CumPos[n]}
	if k > 0 {
		l.Precision = float64(l.Positives) / float64(k)
	}
	if l.AllPositives > 0 {
		l.Recall = float64(l.Positives) / float64(l.AllPositives)
	}
	return l
}

// Above returns how many customers score at or above t.
func (r Ranked) Above(t float64) int {
	// Scores are descending: the first position scoring below t.
	lo, hi := 0, len(r.Scores)
	for lo < hi {
		m := (lo + hi) / 2
		if float64(r.Scores[m]) >= t {
			lo = m + 1
		} else {
			hi = m
		}
	}
	return lo
}

// Value are the assumptions of the expected-value chart.
type Value struct {
	CostPerContact float64 // what contacting one customer costs
	KeptValue      float64 // what one kept customer is worth
	SaveRate       float64 // share of contacted would-be lapsers the outreach keeps (0–1)
}

// Check validates the assumptions.
func (v Value) Check() error {
	if !(v.CostPerContact >= 0 && v.KeptValue >= 0 && v.SaveRate >= 0 && v.SaveRate <= 1) || math.IsInf(v.CostPerContact+v.KeptValue, 0) {
		return problem.New(problem.Invalid, "cost and value must be zero or more, and the save rate between 0 and 1")
	}
	return nil
}

// ValuePoint is the mean expected value of a list of a share of the scored
// customers, over the test dates.
type ValuePoint struct {
	Share float64 // list size as a share of the customers scored
	Value float64 // mean over dates of positives·save rate·value − size·cost
}

// ExpectedValue returns the expected value of lists of 1%, 2%, …, 100% of
// the customers scored, averaged over the dates, and the best point.
func ExpectedValue(dates []Ranked, v Value) ([]ValuePoint, ValuePoint) {
	var pts []ValuePoint
	best := ValuePoint{Value: math.Inf(-1)}
	for pct := 1; pct <= 100; pct++ {
		share := float64(pct) / 100
		sum := 0.0
		for _, r := range dates {
			k := int(math.Ceil(share * float64(len(r.Scores))))
			l := r.ListAt(k)
			sum += float64(l.Positives)*v.SaveRate*v.KeptValue - float64(l.Size)*v.CostPerContact
		}
		p := ValuePoint{Share: share, Value: sum / float64(max(len(dates), 1))}
		pts = append(pts, p)
		if p.Value > best.Value {
			best = p
		}
	}
	return pts, best
}
