package outcomes

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"ebb/internal/gaps"
	"ebb/internal/problem"
)

// Epsilon is the smallest share PSI gives a bin (DESIGN: ε = 0.0001), so
// that a bin empty on one side adds a large but finite term.
const Epsilon = 0.0001

// Edges returns the inner bin edges for PSI: the 0.1, 0.2, …, 0.9 sample
// quantiles (Hyndman & Fan definition 7) of the reference values, ascending,
// with equal edges kept once (a reference with many tied values gives fewer
// than 10 bins). NaN values are ignored. No values give no edges (one bin).
// The reference is not modified.
func Edges(reference []float64) []float64 {
	sorted := make([]float64, 0, len(reference))
	for _, v := range reference {
		if !math.IsNaN(v) {
			sorted = append(sorted, v)
		}
	}
	if len(sorted) == 0 {
		return nil
	}
	slices.Sort(sorted)
	var edges []float64
	for k := 1; k <= 9; k++ {
		e := gaps.Quantile(sorted, float64(k)/10)
		if math.IsNaN(e) { // interpolating next to an infinite reference value
			continue
		}
		if len(edges) == 0 || e != edges[len(edges)-1] {
			edges = append(edges, e)
		}
	}
	return edges
}

// Counts bins values by the ascending inner edges e1 < … < ek into k + 2
// counts: the k + 1 right-closed bins (−∞, e1], (e1, e2], …, (ek, ∞), then
// one final "missing" bin holding the NaN values. A value equal to an edge
// goes to the bin below it. ±∞ fall in the first and last bins.
func Counts(values, edges []float64) []int {
	out := make([]int, len(edges)+2)
	for _, v := range values {
		if math.IsNaN(v) {
			out[len(edges)+1]++
			continue
		}
		out[sort.SearchFloat64s(edges, v)]++ // number of edges < v
	}
	return out
}

// PSI returns the Population Stability Index of the current (actual) bin
// counts against the reference (expected) ones, bin by bin in the same
// order: Σ (a_i − e_i)·ln(a_i / e_i) over the shares a_i = actual_i/Σactual
// and e_i = expected_i/Σexpected. It is ≥ 0 and 0 for identical shares.
//
// Smoothing: each share is raised to at least eps, share = max(share, eps),
// and the shares are not renormalised afterwards. A bin empty on both sides
// (often the missing bin) then adds exactly 0; a bin empty on one side adds
// a large term instead of an infinite one. With no empty bin the result is
// the unsmoothed PSI. ebb uses eps = Epsilon.
//
// It is an Invalid problem when a count is negative, either side has no
// values at all, or eps is not strictly between 0 and 1. PSI panics when
// the slices differ in length (a programming error: both must come from
// Counts with the same edges).
func PSI(expected, actual []int, eps float64) (float64, error) {
	if len(expected) != len(actual) {
		panic(fmt.Sprintf("outcomes: PSI with %d reference bins and %d current bins", len(expected), len(actual)))
	}
	if !(eps > 0 && eps < 1) {
		return 0, problem.New(problem.Invalid, "The smallest bin share must lie strictly between 0 and 1, not %v.", eps)
	}
	te, err := total("reference", expected)
	if err != nil {
		return 0, err
	}
	ta, err := total("current", actual)
	if err != nil {
		return 0, err
	}
	psi := 0.0
	for i := range expected {
		e := max(float64(expected[i])/te, eps)
		a := max(float64(actual[i])/ta, eps)
		psi += (a - e) * math.Log(a/e)
	}
	return psi, nil
}

func total(side string, counts []int) (float64, error) {
	t := 0
	for i, c := range counts {
		if c < 0 {
			return 0, problem.New(problem.Invalid, "Bin %d of the %s values has a negative count (%d).", i+1, side, c)
		}
		t += c
	}
	if t == 0 {
		return 0, problem.New(problem.Invalid, "There are no %s values to compare.", side)
	}
	return float64(t), nil
}

// Stability is how much a distribution has moved, in plain words, as Band
// assigns it.
type Stability string

const (
	Stable      Stability = "stable"      // PSI below 0.1: little change
	Watch       Stability = "watch"       // PSI from 0.1 to 0.25: some change
	Investigate Stability = "investigate" // PSI above 0.25: a major shift
)

// Band names the stability of a PSI value by the common-practice rule of
// thumb of credit scoring (e.g. Siddiqi 2006; a convention, not a test):
// below 0.1 Stable, 0.1 to 0.25 inclusive Watch, above 0.25 Investigate.
// NaN, which PSI never returns, gives Investigate.
func Band(psi float64) Stability {
	switch {
	case psi < 0.1:
		return Stable
	case psi <= 0.25:
		return Watch
	}
	return Investigate
}
