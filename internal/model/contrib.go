package model

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"ebb/internal/frame"
)

// Contributions attributes every row's raw score of the raw frame f to the
// model's Features (row-major, len(Features) values a row, in log-odds; a
// positive value pushes toward y = 1, "no order within H"):
//
//   - trees: path-based contributions (Saabas); bias + Σ = raw log-odds;
//   - logistic regression: coefficient × standardized value, a missing
//     indicator's term credited to its feature; bias (the intercept) + Σ =
//     raw log-odds;
//   - the baseline and BG/NBD, whose scores are not sums: occlusion — the
//     change in the score's log-odds when the feature alone is set to its
//     median over f's rows (Robnik-Šikonja & Kononenko 2008, "Explaining
//     classifications for individual instances", IEEE TKDE 20(5), cited
//     from memory); bias is the log-odds of the all-median row, and the
//     contributions need not add up.
func (m *Model) Contributions(f *frame.Frame) (bias float64, contrib []float64, err error) {
	if err := m.Validate(); err != nil {
		return 0, nil, fmt.Errorf("contributions: %w", err)
	}
	switch m.Kind {
	case KindTrees:
		return m.Trees.Contributions(f)
	case KindLogistic:
		return m.logisticContributions(f)
	case KindBaseline, KindBGNBD:
		return m.occlusion(f)
	}
	return 0, nil, fmt.Errorf("contributions: unknown model kind %q", m.Kind)
}

func (m *Model) logisticContributions(f *frame.Frame) (float64, []float64, error) {
	z, err := m.Standardizer.Apply(f)
	if err != nil {
		return 0, nil, fmt.Errorf("contributions: %w", err)
	}
	p := len(m.Features)
	contrib := make([]float64, f.Rows()*p)
	for t, term := range m.Logistic.Terms {
		j := slices.Index(m.Features, strings.TrimSuffix(term, frame.MissingSuffix))
		if j < 0 {
			j = slices.Index(m.Features, term)
		}
		col, ok := z.Col(term)
		if j < 0 || !ok {
			return 0, nil, fmt.Errorf("contributions: term %q has no feature", term)
		}
		c := m.Logistic.Coef[t]
		for i, v := range col {
			contrib[i*p+j] += c * v
		}
	}
	return m.Logistic.Intercept, contrib, nil
}

func (m *Model) occlusion(f *frame.Frame) (float64, []float64, error) {
	sel, err := f.Select(m.Features)
	if err != nil {
		return 0, nil, fmt.Errorf("contributions: %w", err)
	}
	// A copy: Select shares f's columns, and each is overwritten in turn.
	cols := make([][]float64, len(m.Features))
	for j := range cols {
		cols[j] = slices.Clone(sel.ColAt(j))
	}
	raw, err := frame.FromColumns(m.Features, cols, nil, nil, nil)
	if err != nil {
		return 0, nil, fmt.Errorf("contributions: %w", err)
	}
	base, err := m.Score(raw)
	if err != nil {
		return 0, nil, err
	}
	n, p := raw.Rows(), len(m.Features)
	medians := make([]float64, p)
	for j := range p {
		medians[j] = median(raw.ColAt(j))
	}
	one, _ := frame.New(m.Features, 1)
	for j := range p {
		one.ColAt(j)[0] = medians[j]
	}
	ref, err := m.Score(one)
	if err != nil {
		return 0, nil, err
	}
	contrib := make([]float64, n*p)
	for j := range p {
		col := raw.ColAt(j)
		saved := slices.Clone(col)
		for i := range col {
			col[i] = medians[j]
		}
		occluded, err := m.Score(raw)
		copy(col, saved)
		if err != nil {
			return 0, nil, err
		}
		for i := range n {
			contrib[i*p+j] = logOdds(base[i]) - logOdds(occluded[i])
		}
	}
	return logOdds(ref[0]), contrib, nil
}

// median of the finite values of xs (NaN when there are none).
func median(xs []float64) float64 {
	v := slices.DeleteFunc(slices.Clone(xs), func(x float64) bool { return math.IsNaN(x) || math.IsInf(x, 0) })
	if len(v) == 0 {
		return math.NaN()
	}
	slices.Sort(v)
	k := len(v) / 2
	if len(v)%2 == 1 {
		return v[k]
	}
	return (v[k-1] + v[k]) / 2
}

// logOdds maps a score to log-odds, clamped away from 0 and 1; the
// baseline's recency/X scores above 1 are treated as near-certain.
func logOdds(p float64) float64 {
	p = min(max(p, 1e-9), 1-1e-9)
	return math.Log(p / (1 - p))
}
