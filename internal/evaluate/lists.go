package evaluate

import (
	"math"
	"slices"

	"ebb/internal/problem"
)

// Ranking is the customers scored on one list date in list order: highest
// score first, equal scores by increasing tie-break key. It answers list
// questions (top K, top p%, score ≥ t, gains by decile) without sorting
// again; it is the compact ranked score/label summary of a date.
type Ranking struct {
	scores []float64 // decreasing
	keys   []uint64  // tie-break keys in list order
	cumPos []int32   // cumPos[i] = label-1 customers among the first i
}

// NewRanking orders the customers scored on one date. tieKeys holds one
// tie-break key per customer (a keyed hash of the customer, so the order
// of tied customers is fixed but not chosen by anyone); among equal scores
// the smaller key comes first. Input order never matters. At least one
// customer must have label 1 (recall is undefined otherwise).
func NewRanking(scores []float64, labels []bool, tieKeys []uint64) (*Ranking, error) {
	pos, _, err := counts(scores, labels)
	if err != nil {
		return nil, err
	}
	if len(tieKeys) != len(scores) {
		return nil, problem.New(problem.Invalid, "There are %d scores but %d tie-break keys; each scored customer needs one.", len(scores), len(tieKeys))
	}
	if pos == 0 {
		return nil, problem.New(problem.Invalid, "Every scored customer ordered again, so recall cannot be measured on this date.")
	}
	if len(scores) > math.MaxInt32 {
		return nil, problem.New(problem.Invalid, "Too many scored customers (%d) for one list date.", len(scores))
	}
	type entry struct {
		score float64
		key   uint64
		label bool
	}
	es := make([]entry, len(scores))
	for i, s := range scores {
		es[i] = entry{s, tieKeys[i], labels[i]}
	}
	slices.SortFunc(es, func(a, b entry) int {
		switch {
		case a.score > b.score:
			return -1
		case a.score < b.score:
			return 1
		case a.key < b.key:
			return -1
		case a.key > b.key:
			return 1
		}
		return 0
	})
	r := &Ranking{
		scores: make([]float64, len(es)),
		keys:   make([]uint64, len(es)),
		cumPos: make([]int32, len(es)+1),
	}
	for i, e := range es {
		r.scores[i] = e.score
		r.keys[i] = e.key
		r.cumPos[i+1] = r.cumPos[i]
		if e.label {
			r.cumPos[i+1]++
		}
	}
	return r, nil
}

// N is the number of customers scored.
func (r *Ranking) N() int { return len(r.scores) }

// Positives is the number of scored customers with label 1.
func (r *Ranking) Positives() int { return int(r.cumPos[len(r.scores)]) }

// List is the outcome of one list on one date.
type List struct {
	Size         int     // customers on the list
	Positives    int     // of them, customers who did not order again within H
	Scored       int     // customers scored on the date
	AllPositives int     // scored customers who did not order again within H
	Precision    float64 // Positives / Size; 0 for an empty list (scikit-learn's zero_division default)
	Recall       float64 // Positives / AllPositives
}

// TopK is the list of the K highest-ranked customers (all of them when K
// exceeds the number scored). K must be at least 1.
func (r *Ranking) TopK(k int) (List, error) {
	if k < 1 {
		return List{}, problem.New(problem.Invalid, "A list needs at least one customer; %d was asked for.", k)
	}
	k = min(k, len(r.scores))
	if err := r.checkCut(k); err != nil {
		return List{}, err
	}
	return r.list(k), nil
}

// TopPercent is the list of the top pct percent of the scored customers:
// K = ⌈pct·n/100⌉ (at least one customer), pct in (0, 100].
func (r *Ranking) TopPercent(pct float64) (List, error) {
	if !(pct > 0 && pct <= 100) {
		return List{}, problem.New(problem.Invalid, "A list share must be above 0%% and at most 100%%, not %v%%.", pct)
	}
	// The 1e-9 keeps 10% of 100 at 10 despite rounding in pct·n/100.
	k := int(math.Ceil(pct*float64(len(r.scores))/100 - 1e-9))
	return r.TopK(max(k, 1))
}

// AtThreshold is the list of every customer with score ≥ t. It may be
// empty (precision 0 then). t must not be NaN.
func (r *Ranking) AtThreshold(t float64) (List, error) {
	if math.IsNaN(t) {
		return List{}, problem.New(problem.Invalid, "The score threshold is not a number.")
	}
	// scores decrease: the first index whose score is below t is the size.
	k, _ := slices.BinarySearchFunc(r.scores, t, func(s, t float64) int {
		if s >= t {
			return -1
		}
		return 1
	})
	return r.list(k), nil
}

func (r *Ranking) list(k int) List {
	l := List{
		Size: k, Positives: int(r.cumPos[k]),
		Scored: len(r.scores), AllPositives: r.Positives(),
	}
	if k > 0 {
		l.Precision = float64(l.Positives) / float64(k)
	}
	l.Recall = float64(l.Positives) / float64(l.AllPositives)
	return l
}

// checkCut refuses a cut between positions k−1 and k that splits customers
// sharing both score and tie-break key when their labels differ: the list
// would then depend on input order. With keyed 64-bit hashes this does not
// happen unless the same key was given to different customers.
func (r *Ranking) checkCut(k int) error {
	if k <= 0 || k >= len(r.scores) || r.scores[k-1] != r.scores[k] || r.keys[k-1] != r.keys[k] {
		return nil
	}
	a, b := k-1, k+1
	for a > 0 && r.scores[a-1] == r.scores[k] && r.keys[a-1] == r.keys[k] {
		a--
	}
	for b < len(r.scores) && r.scores[b] == r.scores[k] && r.keys[b] == r.keys[k] {
		b++
	}
	if p := int(r.cumPos[b] - r.cumPos[a]); p != 0 && p != b-a {
		return problem.New(problem.Invalid, "Customers with the same score also share a tie-break key, so the list cannot be cut at %d without depending on input order.", k)
	}
	return nil
}

// ListAverage summarises the same kind of list over several list dates.
type ListAverage struct {
	Dates         int
	MeanPrecision float64 // mean of the per-date precisions
	MeanRecall    float64 // mean of the per-date recalls
	MeanSize      float64
	Size          int // customers on the lists, summed over dates
	Positives     int // of them, label 1, summed over dates
	AllPositives  int // label-1 customers scored, summed over dates
}

// AverageLists averages per-date list results: each date counts equally in
// the mean precision and recall (a list is drawn on one date); the totals
// are plain sums.
func AverageLists(lists []List) (ListAverage, error) {
	if len(lists) == 0 {
		return ListAverage{}, problem.New(problem.Invalid, "There are no list dates to average over.")
	}
	a := ListAverage{Dates: len(lists)}
	for _, l := range lists {
		a.MeanPrecision += l.Precision
		a.MeanRecall += l.Recall
		a.Size += l.Size
		a.Positives += l.Positives
		a.AllPositives += l.AllPositives
	}
	n := float64(len(lists))
	a.MeanPrecision /= n
	a.MeanRecall /= n
	a.MeanSize = float64(a.Size) / n
	return a, nil
}

// GainsRow is one group (decile, for 10 groups) of a gains and lift table,
// customers in list order.
type GainsRow struct {
	Group        int // 1 = highest scores
	Count        int
	Positives    int
	CumCount     int
	CumPositives int
	Rate         float64 // Positives / Count
	Gain         float64 // CumPositives / all positives: cumulative recall
	Lift         float64 // Rate / overall rate
	CumLift      float64 // (CumPositives / CumCount) / overall rate
}

// Gains splits the ranking into `groups` groups of (nearly) equal size —
// group g holds list positions ⌊(g−1)·n/groups⌋ … ⌊g·n/groups⌋ − 1 — and
// returns gains and lift per group. Use 10 for deciles.
func (r *Ranking) Gains(groups int) ([]GainsRow, error) {
	n := len(r.scores)
	if groups < 1 || groups > n {
		return nil, problem.New(problem.Invalid, "Cannot split %d customers into %d groups.", n, groups)
	}
	overall := float64(r.Positives()) / float64(n)
	rows := make([]GainsRow, groups)
	for g := range groups {
		lo, hi := g*n/groups, (g+1)*n/groups
		if err := r.checkCut(hi); err != nil {
			return nil, err
		}
		p := int(r.cumPos[hi] - r.cumPos[lo])
		cp := int(r.cumPos[hi])
		rows[g] = GainsRow{
			Group: g + 1, Count: hi - lo, Positives: p, CumCount: hi, CumPositives: cp,
			Rate:    float64(p) / float64(hi-lo),
			Gain:    float64(cp) / float64(r.Positives()),
			Lift:    float64(p) / float64(hi-lo) / overall,
			CumLift: float64(cp) / float64(hi) / overall,
		}
	}
	return rows, nil
}
