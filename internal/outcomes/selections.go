package outcomes

import (
	"cmp"
	"slices"

	"ebb/internal/civil"
	"ebb/internal/problem"
)

// Selection is one appearance of a customer on a published list that fell
// in a holdout period: the input of FirstSelections.
type Selection struct {
	Customer  int32
	Period    int        // the holdout period: any number that identifies it
	Week      civil.Date // first day of the week the list was drawn in
	Contacted bool       // false: a holdout member, withheld from the list
	Band      string
}

// FirstSelections keeps one selection per customer and holdout period: the
// one in the earliest week, so that a customer selected again in later
// weeks of the same period counts once, by the week they were first
// selected in (DESIGN, campaign effect). When a customer is selected more
// than once in that earliest week (two lists in one week), the one with
// the smallest Band name is kept, so the result never depends on input
// order. The result is sorted by Period, Week and Customer.
//
// Holdout membership is fixed for a customer within a period, so it is an
// Invalid problem when a customer is both contacted and withheld in the
// same period.
func FirstSelections(sel []Selection) ([]Selection, error) {
	s := slices.Clone(sel)
	slices.SortFunc(s, func(a, b Selection) int {
		return cmp.Or(
			cmp.Compare(a.Period, b.Period),
			cmp.Compare(a.Customer, b.Customer),
			cmp.Compare(a.Week, b.Week),
			cmp.Compare(a.Band, b.Band),
		)
	})
	var out []Selection
	for i, x := range s {
		if i > 0 && x.Period == s[i-1].Period && x.Customer == s[i-1].Customer {
			if x.Contacted != s[i-1].Contacted {
				return nil, problem.New(problem.Invalid,
					"Customer %d is both contacted and in the holdout in the same holdout period; a customer's holdout membership is fixed for the period.", x.Customer)
			}
			continue
		}
		out = append(out, x)
	}
	slices.SortFunc(out, func(a, b Selection) int {
		return cmp.Or(cmp.Compare(a.Period, b.Period), cmp.Compare(a.Week, b.Week), cmp.Compare(a.Customer, b.Customer))
	})
	return out, nil
}

// Member returns the campaign-effect member of a first selection, given
// whether the customer did not order again within H days of its week.
func (s Selection) Member(noReorder bool) Member {
	return Member{Customer: s.Customer, Contacted: s.Contacted, Band: s.Band, WeekStart: s.Week, NoReorder: noReorder}
}
