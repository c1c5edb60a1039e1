package lists

import (
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"testing"

	"ebb/internal/problem"
)

// cand is a contactable candidate with key k, score s and tie key tie.
func cand(k string, s float64, tie uint64) Candidate {
	return Candidate{Key: k, Score: s, TieKey: tie, Contactable: true}
}

func keysOf(cands []Candidate, idx []int) []string {
	out := make([]string, len(idx))
	for i, j := range idx {
		out[i] = cands[j].Key
	}
	return out
}

func inSet(keys ...string) func(string) bool {
	return func(k string) bool { return slices.Contains(keys, k) }
}

func TestSelect(t *testing.T) {
	noContact := func(c Candidate) Candidate { c.Contactable = false; return c }
	base := []Candidate{
		cand("d", 0.40, 1),
		cand("a", 0.90, 5),
		noContact(cand("x", 0.95, 1)),
		cand("c", 0.60, 9),
		cand("b", 0.60, 2), // ties with c; smaller tie key first
		noContact(cand("y", 0.10, 1)),
		cand("e", 0.10, 3),
	}
	tests := []struct {
		name           string
		rule           Rule
		holdout        func(string) bool
		contact, held  []string
		eligible, notC int
	}{
		{"top 3", Rule{Size: 3}, nil, []string{"a", "b", "c"}, nil, 5, 2},
		{"top 3 with holdout", Rule{Size: 3}, inSet("b", "e"), []string{"a", "c"}, []string{"b"}, 5, 2},
		{"holdout outside the list", Rule{Size: 2}, inSet("c"), []string{"a", "b"}, nil, 5, 2},
		{"size above eligible", Rule{Size: 50}, nil, []string{"a", "b", "c", "d", "e"}, nil, 5, 2},
		{"threshold", Rule{UseThreshold: true, Threshold: 0.6}, nil, []string{"a", "b", "c"}, nil, 5, 2},
		{"threshold 0 takes everyone eligible", Rule{UseThreshold: true}, inSet("x", "d"), []string{"a", "b", "c", "e"}, []string{"d"}, 5, 2},
		{"threshold above every score", Rule{UseThreshold: true, Threshold: 0.99}, nil, nil, nil, 5, 2},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			s, err := Select(base, tt.rule, tt.holdout)
			if err != nil {
				t.Fatal(err)
			}
			if got := keysOf(base, s.Contact); !slices.Equal(got, tt.contact) {
				t.Errorf("Contact = %q, want %q", got, tt.contact)
			}
			if got := keysOf(base, s.Holdout); !slices.Equal(got, tt.held) {
				t.Errorf("Holdout = %q, want %q", got, tt.held)
			}
			if s.Eligible != tt.eligible || s.NotContactable != tt.notC {
				t.Errorf("Eligible, NotContactable = %d, %d, want %d, %d", s.Eligible, s.NotContactable, tt.eligible, tt.notC)
			}
		})
	}
}

func TestSelectErrors(t *testing.T) {
	ok := []Candidate{cand("a", 0.5, 1)}
	tests := []struct {
		name    string
		cands   []Candidate
		rule    Rule
		problem bool // a *problem.Error for the user, else an internal error
	}{
		{"no candidates", nil, Rule{Size: 10}, true},
		{"none contactable", []Candidate{{Key: "a", Score: 0.5}}, Rule{Size: 10}, true},
		{"size 0", ok, Rule{}, true},
		{"negative size", ok, Rule{Size: -1}, true},
		{"threshold below 0", ok, Rule{UseThreshold: true, Threshold: -0.1}, true},
		{"threshold above 1", ok, Rule{UseThreshold: true, Threshold: 1.1}, true},
		{"threshold NaN", ok, Rule{UseThreshold: true, Threshold: math.NaN()}, true},
		{"size and threshold", ok, Rule{Size: 5, UseThreshold: true, Threshold: 0.5}, true},
		{"NaN score", []Candidate{cand("a", math.NaN(), 1)}, Rule{Size: 1}, false},
		{"score above 1", []Candidate{cand("a", 1.5, 1)}, Rule{Size: 1}, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Select(tt.cands, tt.rule, nil)
			if err == nil {
				t.Fatal("Select succeeded, want an error")
			}
			if got := problem.Is(err, problem.Invalid); got != tt.problem {
				t.Errorf("Select error %q: problem.Invalid = %v, want %v", err, got, tt.problem)
			}
		})
	}
}

// Select never depends on input order: shuffled candidates with many tied
// scores give the same customers in the same order, every one of them
// ranks at or above every contactable customer left out, and exactly the
// holdout members among them are withheld.
func TestSelectIgnoresInputOrder(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	h := Holdout{Salt: testSalt, Share: 0.1, PeriodDays: 91}
	for trial := range 50 {
		n := 1 + rng.IntN(300)
		cands := make([]Candidate, n)
		for i := range cands {
			cands[i] = Candidate{
				Customer:    int32(i),
				Key:         "c-" + strconv.Itoa(i),
				Score:       float64(rng.IntN(5)) / 4, // heavy ties
				TieKey:      rng.Uint64(),
				Contactable: rng.IntN(10) > 0,
			}
		}
		cands[0].Contactable = true
		rule := Rule{Size: 1 + rng.IntN(n)}
		if trial%2 == 1 {
			rule = Rule{UseThreshold: true, Threshold: float64(rng.IntN(5)) / 4}
		}
		in := h.Members(7)
		first, err := Select(cands, rule, in)
		if err != nil {
			t.Fatal(err)
		}
		wantContact, wantHeld := keysOf(cands, first.Contact), keysOf(cands, first.Holdout)

		taken := map[string]bool{}
		for _, k := range append(slices.Clone(wantContact), wantHeld...) {
			taken[k] = true
		}
		for _, k := range wantHeld {
			if !in(k) {
				t.Fatalf("trial %d: %q withheld but not in the holdout", trial, k)
			}
		}
		for _, k := range wantContact {
			if in(k) {
				t.Fatalf("trial %d: %q to be contacted but in the holdout", trial, k)
			}
		}
		rank := Ranked(cands)
		seenOut := false
		for _, i := range rank {
			c := cands[i]
			if !c.Contactable {
				if taken[c.Key] {
					t.Fatalf("trial %d: non-contactable %q was selected", trial, c.Key)
				}
				continue
			}
			if !taken[c.Key] {
				seenOut = true
			} else if seenOut {
				t.Fatalf("trial %d: %q selected below a customer left out", trial, c.Key)
			}
		}

		shuffled := slices.Clone(cands)
		rng.Shuffle(n, func(i, j int) { shuffled[i], shuffled[j] = shuffled[j], shuffled[i] })
		second, err := Select(shuffled, rule, in)
		if err != nil {
			t.Fatal(err)
		}
		if got := keysOf(shuffled, second.Contact); !slices.Equal(got, wantContact) {
			t.Fatalf("trial %d: after shuffling, Contact = %q, want %q", trial, got, wantContact)
		}
		if got := keysOf(shuffled, second.Holdout); !slices.Equal(got, wantHeld) {
			t.Fatalf("trial %d: after shuffling, Holdout = %q, want %q", trial, got, wantHeld)
		}
		if second.Eligible != first.Eligible || second.NotContactable != first.NotContactable {
			t.Fatalf("trial %d: counts changed after shuffling", trial)
		}
	}
}

func TestRanked(t *testing.T) {
	cands := []Candidate{
		cand("low", 0.1, 0),
		cand("tie-late", 0.5, 9),
		cand("top", 0.9, 7),
		cand("tie-early", 0.5, 2),
		cand("same-tie-b", 0.3, 4),
		cand("same-tie-a", 0.3, 4),
	}
	want := []string{"top", "tie-early", "tie-late", "same-tie-a", "same-tie-b", "low"}
	if got := keysOf(cands, Ranked(cands)); !slices.Equal(got, want) {
		t.Errorf("Ranked = %q, want %q", got, want)
	}
}
