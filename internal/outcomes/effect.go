package outcomes

import (
	"fmt"
	"maps"
	"slices"

	"ebb/internal/civil"
	"ebb/internal/problem"
)

// Member is one customer selected for a list in a holdout period, counted
// once, by the week they were first selected in that period (see
// FirstSelections), with their outcome H days after that week.
type Member struct {
	Customer  int32
	Contacted bool       // false: a holdout member, selected but withheld
	Band      string     // the risk band the list gave them; "" for none
	WeekStart civil.Date // first day of the week of the first selection
	NoReorder bool       // did not order again within H days
}

// Group is one arm of the comparison.
type Group struct {
	N         int     // customers
	NoReorder int     // of them, those who did not order again within H
	Rate      float64 // NoReorder / N; 0 for an empty group
}

// Effect compares the no-reorder rate of contacted customers with that of
// the holdout.
type Effect struct {
	Contacted, Holdout Group
	// Diff is Contacted.Rate − Holdout.Rate (negative when contact helped),
	// with Newcombe's hybrid score 95% interval [Lo, Hi]. All three are 0
	// when a group is empty.
	Diff, Lo, Hi float64
	// Sufficient reports whether both groups are big enough to read Diff:
	// see MeasureEffect. When false, show the Sentence, not the numbers.
	Sufficient bool
	// MDE is the smallest drop in the no-reorder rate from the holdout's
	// rate that groups of these sizes detect with 80% power in a 5%
	// two-sided test (MinDetectableEffect). It is 0 when it cannot be
	// given: a group is empty, the holdout rate is 0, or not even a drop to
	// 0 would be detectable.
	MDE float64
	// Sentence says what the comparison shows, in plain words.
	Sentence string
}

// BandEffect is the Effect within one risk band.
type BandEffect struct {
	Band string
	Effect
}

// The smallest groups MeasureEffect reads: at least minGroup customers in
// each group, with at least minOutcome who did not order again and
// minOutcome who did. A common rule of thumb (the normal approximation
// behind the interval and the power calculation wants about five of each
// outcome), not a theorem.
const (
	minGroup   = 30
	minOutcome = 5
)

// MeasureEffect compares contacted customers with the holdout, overall and
// within each non-empty band (sorted by band name; members with Band ""
// count only overall). Each comparison is the difference in no-reorder
// rates, contacted minus holdout, with Newcombe's hybrid score interval
// (method 10) at 95%.
//
// A comparison is Sufficient only when each group has at least 30
// customers, of whom at least 5 did not order again and at least 5 did (a
// common rule of thumb). Otherwise its sentence says the groups are too
// small to say anything and gives the smallest detectable effect for their
// sizes at the holdout rate. An empty group gives a sentence, never NaN.
//
// A customer may appear once per holdout period, so it is an Invalid
// problem when the same customer appears twice with the same WeekStart.
func MeasureEffect(members []Member) (Effect, []BandEffect, error) {
	type key struct {
		customer int32
		week     civil.Date
	}
	seen := make(map[key]bool, len(members))
	var all [2]Group // [0] contacted, [1] holdout
	byBand := map[string]*[2]Group{}
	for _, m := range members {
		k := key{m.Customer, m.WeekStart}
		if seen[k] {
			return Effect{}, nil, problem.New(problem.Invalid,
				"Customer %d is counted twice for the week of %s; each customer counts once, by the week they were first selected in a holdout period.",
				m.Customer, m.WeekStart)
		}
		seen[k] = true
		arm := 0
		if !m.Contacted {
			arm = 1
		}
		add(&all[arm], m.NoReorder)
		if m.Band != "" {
			g := byBand[m.Band]
			if g == nil {
				g = new([2]Group)
				byBand[m.Band] = g
			}
			add(&g[arm], m.NoReorder)
		}
	}
	bands := make([]BandEffect, 0, len(byBand))
	for _, name := range slices.Sorted(maps.Keys(byBand)) {
		g := byBand[name]
		bands = append(bands, BandEffect{Band: name, Effect: compare(g[0], g[1])})
	}
	return compare(all[0], all[1]), bands, nil
}

func add(g *Group, noReorder bool) {
	g.N++
	if noReorder {
		g.NoReorder++
	}
	g.Rate = float64(g.NoReorder) / float64(g.N)
}

// compare builds the Effect of two groups' counts.
func compare(c, h Group) Effect {
	e := Effect{Contacted: c, Holdout: h}
	if c.N == 0 || h.N == 0 {
		e.Sentence = emptySentence(c.N, h.N)
		return e
	}
	// Counts are valid by construction, so neither call can fail.
	e.Diff, e.Lo, e.Hi, _ = NewcombeDiff(c.NoReorder, c.N, h.NoReorder, h.N, Z95)
	if h.Rate > 0 {
		if mde, err := MinDetectableEffect(c.N, h.N, h.Rate, DefaultAlpha, DefaultPower); err == nil {
			e.MDE = mde
		}
	}
	e.Sufficient = enough(c) && enough(h)
	if !e.Sufficient {
		e.Sentence = smallSentence(e)
		return e
	}
	e.Sentence = diffSentence(e.Diff, e.Lo, e.Hi)
	return e
}

func enough(g Group) bool {
	return g.N >= minGroup && g.NoReorder >= minOutcome && g.N-g.NoReorder >= minOutcome
}

func emptySentence(contacted, holdout int) string {
	switch {
	case contacted == 0 && holdout == 0:
		return "No customers were selected in a holdout period yet, so there is nothing to compare."
	case holdout == 0 && contacted == 1:
		return "The only customer selected was contacted, so there is no holdout to compare with."
	case holdout == 0:
		return fmt.Sprintf("None of the %s selected was in the holdout, so there is no one to compare the contacted customers with.", customers(contacted))
	case holdout == 1:
		return "The only customer selected was in the holdout, so there are no contacted customers to compare with."
	}
	return fmt.Sprintf("All %s selected were in the holdout, so there are no contacted customers to compare with them.", customers(holdout))
}

func smallSentence(e Effect) string {
	s := fmt.Sprintf("The groups are too small to say anything yet: %s contacted and %s holdout %s "+
		"(a common rule of thumb asks for at least %d in each group, with at least %d who ordered again and %d who did not).",
		count(e.Contacted.N), count(e.Holdout.N), plural(e.Holdout.N, "customer", "customers"), minGroup, minOutcome, minOutcome)
	switch {
	case e.MDE > 0:
		s += fmt.Sprintf(" With groups of this size, only a drop of at least %s points from the holdout's %s could be detected reliably (%s power, %s two-sided test).",
			points(e.MDE), pct(e.Holdout.Rate), pct(DefaultPower), pct(DefaultAlpha))
	case e.Holdout.Rate == 0:
		s += " No holdout customer failed to reorder, so there was no drop to detect."
	default:
		s += fmt.Sprintf(" With groups of this size, even a drop from %s to 0%% could not be detected reliably.", pct(e.Holdout.Rate))
	}
	return s
}

func diffSentence(d, lo, hi float64) string {
	switch {
	case hi < 0:
		return fmt.Sprintf("Contacted customers failed to reorder %s points less often than the holdout (95%% interval %s to %s points).",
			points(d), points(hi), points(lo))
	case lo > 0:
		return fmt.Sprintf("Contacted customers failed to reorder %s points more often than the holdout (95%% interval %s to %s points).",
			points(d), points(lo), points(hi))
	}
	how := "as often as the holdout, and"
	switch {
	case d < 0:
		how = points(d) + " points less often than the holdout, but"
	case d > 0:
		how = points(d) + " points more often than the holdout, but"
	}
	return fmt.Sprintf("There is no clear difference: contacted customers failed to reorder %s the 95%% interval runs from %s to %s.",
		how, side(lo), side(hi))
}

// side describes one end of an interval for a difference in rates.
func side(v float64) string {
	switch {
	case v < 0:
		return points(v) + " points less often"
	case v > 0:
		return points(v) + " points more often"
	}
	return "no difference"
}
