package lists

import (
	"cmp"
	"crypto/hmac"
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"slices"

	"ebb/internal/problem"
)

// Candidate is one scored active customer offered to Select.
type Candidate struct {
	Customer    int32   // the customer's index in the history
	Key         string  // the customer's key in the business's data
	Score       float64 // calibrated probability of no reorder within H, in [0, 1]
	TieKey      uint64  // keyed hash of the customer; orders equal scores
	Contactable bool    // false: the customer may not receive marketing
}

// Rule says how many customers a list takes: the Size highest-risk
// eligible customers, or, with UseThreshold, every eligible customer whose
// score is ≥ Threshold (Threshold 0 takes every eligible customer). Exactly
// one of the two is set: Size is 0 when UseThreshold is true.
type Rule struct {
	Size         int
	Threshold    float64
	UseThreshold bool
}

// validate reports, as a sentence for the user, why r cannot be used.
func (r Rule) validate() error {
	if r.UseThreshold {
		if r.Size != 0 {
			return problem.New(problem.Invalid, "Choose either a list size or a score threshold, not both.")
		}
		if !(r.Threshold >= 0 && r.Threshold <= 1) {
			return problem.New(problem.Invalid, "The score threshold must be between 0 and 1 (got %g).", r.Threshold)
		}
		return nil
	}
	if r.Size < 1 {
		return problem.New(problem.Invalid, "The list size must be at least 1 (got %d).", r.Size)
	}
	return nil
}

// Selection is the outcome of Select. Contact and Holdout hold indices into
// the candidates, in rank order; together they are the customers the rule
// selected.
type Selection struct {
	Contact        []int // selected and to be contacted
	Holdout        []int // selected but withheld: holdout members
	Eligible       int   // contactable candidates, the pool the rule chose from
	NotContactable int   // candidates removed because they may not be contacted
}

// Select draws a list from cands. It ranks them (see Ranked), removes the
// customers who may not be contacted before anything else, takes the top
// rule.Size of the rest (all of them when there are fewer) or every one
// scoring ≥ rule.Threshold, and then withholds the holdout members among
// those taken, so a list of size K contacts about (1 − share)·K customers.
// inHoldout may be nil (no holdout). Input order never matters.
//
// An invalid rule, no candidates or no contactable candidate is a
// *problem.Error; a score that is NaN or outside [0, 1] is a plain error
// (the caller passed uncalibrated scores).
func Select(cands []Candidate, rule Rule, inHoldout func(key string) bool) (Selection, error) {
	if err := rule.validate(); err != nil {
		return Selection{}, err
	}
	if len(cands) == 0 {
		return Selection{}, problem.New(problem.Invalid, "There are no customers to choose from.")
	}
	for _, c := range cands {
		if !(c.Score >= 0 && c.Score <= 1) {
			return Selection{}, fmt.Errorf("select list: customer %q has score %v, want a probability in [0, 1]", c.Key, c.Score)
		}
	}
	var s Selection
	for _, c := range cands {
		if c.Contactable {
			s.Eligible++
		}
	}
	s.NotContactable = len(cands) - s.Eligible
	if s.Eligible == 0 {
		return Selection{}, problem.New(problem.Invalid, "None of the %d customers may be contacted, so the list would be empty.", len(cands))
	}
	taken := 0
	for _, i := range Ranked(cands) {
		c := &cands[i]
		if !c.Contactable {
			continue
		}
		if rule.UseThreshold && c.Score < rule.Threshold || !rule.UseThreshold && taken == rule.Size {
			break
		}
		taken++
		if inHoldout != nil && inHoldout(c.Key) {
			s.Holdout = append(s.Holdout, i)
		} else {
			s.Contact = append(s.Contact, i)
		}
	}
	return s, nil
}

// Ranked returns the indices of cands in list order: score descending,
// equal scores by TieKey ascending, then (for the rare equal tie keys) by
// Key and Customer, so the order never depends on input order. NaN scores
// come last.
func Ranked(cands []Candidate) []int {
	idx := make([]int, len(cands))
	for i := range idx {
		idx[i] = i
	}
	slices.SortFunc(idx, func(i, j int) int {
		a, b := &cands[i], &cands[j]
		if c := cmp.Compare(b.Score, a.Score); c != 0 {
			return c
		}
		if c := cmp.Compare(a.TieKey, b.TieKey); c != 0 {
			return c
		}
		if c := cmp.Compare(a.Key, b.Key); c != 0 {
			return c
		}
		return cmp.Compare(a.Customer, b.Customer)
	})
	return idx
}

// TieKey is the keyed hash that orders customers with equal scores: the
// first 8 bytes of HMAC-SHA256 (RFC 2104) under the dataset's salt of
// "tie:" and the customer key, so ties never follow input order and are
// not guessable without the salt. The prefix keeps it apart from the
// holdout's hash.
func TieKey(salt []byte, customerKey string) uint64 { return TieKeys(salt)(customerKey) }

// TieKeys returns TieKey under one salt as a function that reuses its HMAC
// state: faster for many customers, and not safe for concurrent use.
func TieKeys(salt []byte) func(customerKey string) uint64 {
	mac := hmac.New(sha256.New, salt)
	var sum []byte
	return func(key string) uint64 {
		mac.Reset()
		mac.Write([]byte("tie:"))
		mac.Write([]byte(key))
		sum = mac.Sum(sum[:0])
		return binary.BigEndian.Uint64(sum)
	}
}
