package evaluate

import (
	"math"
	"math/rand/v2"
	"slices"

	"ebb/internal/problem"
)

// Intervals are the bootstrap intervals of the four headline metrics of
// one model's probabilities.
type Intervals struct {
	ROCAUC, AveragePrecision, Brier, LogLoss Interval
}

// BootstrapAll gives the same intervals as Bootstrap with ROCAUC,
// AveragePrecision, Brier and LogLoss — the same resampled customers, drawn
// with the same generator — but sorts the rows once: a resample repeats
// rows, so each metric of it is the metric of the original rows weighted
// by how often their customer was drawn, one pass in score order. That
// turns 200 sorts per metric into one.
func BootstrapAll(probs []float64, labels []bool, clusters []int, opt BootstrapOptions) (Intervals, error) {
	var out Intervals
	if _, err := probabilities(probs, labels); err != nil {
		return out, err
	}
	w, err := newWeighted(probs, labels, clusters, opt)
	if err != nil {
		return out, err
	}
	o := w.sort(probs)
	metrics := [4]Metric{ROCAUC, AveragePrecision, Brier, LogLoss}
	ivs := make([]Interval, 4)
	for m := range 4 {
		est, err := metrics[m](probs, labels)
		if err != nil {
			return out, err
		}
		ivs[m].Estimate = est
	}
	vals := w.run(func(counts []float64) [4]float64 {
		o.weigh(counts)
		b, l := o.brierAndLogLoss()
		return [4]float64{o.auc(), o.ap(), b, l}
	})
	for m := range 4 {
		iv, err := w.interval(ivs[m].Estimate, vals, m)
		if err != nil {
			return out, err
		}
		ivs[m] = iv
	}
	return Intervals{ROCAUC: ivs[0], AveragePrecision: ivs[1], Brier: ivs[2], LogLoss: ivs[3]}, nil
}

// PairedAUC is PairedBootstrap with ROCAUC, computed by weights as
// BootstrapAll is.
func PairedAUC(scoresA, scoresB []float64, labels []bool, clusters []int, opt BootstrapOptions) (Interval, error) {
	if len(scoresA) != len(scoresB) {
		return Interval{}, problem.New(problem.Invalid, "The two models scored %d and %d rows; a paired comparison needs the same rows.", len(scoresA), len(scoresB))
	}
	a, err := ROCAUC(scoresA, labels)
	if err != nil {
		return Interval{}, err
	}
	b, err := ROCAUC(scoresB, labels)
	if err != nil {
		return Interval{}, err
	}
	w, err := newWeighted(scoresA, labels, clusters, opt)
	if err != nil {
		return Interval{}, err
	}
	oa, ob := w.sort(scoresA), w.sort(scoresB)
	vals := w.run(func(counts []float64) [4]float64 {
		oa.weigh(counts)
		ob.weigh(counts)
		return [4]float64{oa.auc() - ob.auc()}
	})
	return w.interval(a-b, vals, 0)
}

// weighted holds what every replicate shares: each row's customer, the
// customers' draws, and the options.
type weighted struct {
	labels  []bool
	cust    []int32 // row → customer number (by first appearance)
	nc      int
	reps    int
	level   float64
	rng     *rand.Rand
	skipped []bool
}

func newWeighted(scores []float64, labels []bool, clusters []int, opt BootstrapOptions) (*weighted, error) {
	n := len(scores)
	if n != len(labels) || n != len(clusters) {
		return nil, problem.New(problem.Invalid, "There are %d scores, %d labels and %d customer ids; each row needs one of each.", n, len(labels), len(clusters))
	}
	w := &weighted{labels: labels, cust: make([]int32, n), reps: opt.Replicates, level: opt.Level,
		rng: rand.New(rand.NewPCG(opt.Seed1, opt.Seed2))}
	if w.reps == 0 {
		w.reps = DefaultReplicates
	}
	if w.level == 0 {
		w.level = 0.95
	}
	if w.reps < 1 || !(w.level > 0 && w.level < 1) {
		return nil, problem.New(problem.Invalid, "The bootstrap needs at least one replicate and a level strictly between 0 and 1.")
	}
	id := map[int]int32{}
	for i, c := range clusters {
		k, ok := id[c]
		if !ok {
			k = int32(len(id))
			id[c] = k
		}
		w.cust[i] = k
	}
	w.nc = len(id)
	return w, nil
}

// run draws the replicates (customers with replacement, in the order
// Bootstrap draws them) and evaluates each from the customers' counts.
func (w *weighted) run(eval func(counts []float64) [4]float64) [][4]float64 {
	counts := make([]float64, w.nc)
	out := make([][4]float64, 0, w.reps)
	for range w.reps {
		clear(counts)
		for range w.nc {
			counts[w.rng.IntN(w.nc)]++
		}
		out = append(out, eval(counts))
	}
	return out
}

// interval is the percentile interval of metric m over the replicates;
// NaN replicates (one class drawn) are skipped as Bootstrap skips them.
func (w *weighted) interval(est float64, vals [][4]float64, m int) (Interval, error) {
	var xs []float64
	skipped := 0
	for _, v := range vals {
		if math.IsNaN(v[m]) {
			skipped++
			continue
		}
		xs = append(xs, v[m])
	}
	if len(xs) == 0 || skipped*10 > w.reps {
		return Interval{}, problem.New(problem.Invalid, "Too few customers for a bootstrap interval: %d of %d resamples could not be evaluated (for example, they held only one class).", skipped, w.reps)
	}
	slices.Sort(xs)
	alpha := (1 - w.level) / 2
	return Interval{Estimate: est, Lower: quantile7(xs, alpha), Upper: quantile7(xs, 1-alpha), Replicates: len(xs), Skipped: skipped}, nil
}

// sorted is one score vector's rows in ascending score order, copied so
// that every replicate's passes read memory in sequence (on this kind of
// machine a random read costs far more than the arithmetic).
type sorted struct {
	scores []float64
	labels []bool
	cust   []int32
	w      []float64 // the current replicate's weights, in this order
	// Each row's squared error and log loss, computed once.
	sq, ll []float64
}

func (w *weighted) sort(scores []float64) *sorted {
	idx := make([]int32, len(scores))
	for i := range idx {
		idx[i] = int32(i)
	}
	slices.SortFunc(idx, func(a, b int32) int {
		switch {
		case scores[a] < scores[b]:
			return -1
		case scores[a] > scores[b]:
			return 1
		}
		return 0
	})
	n := len(idx)
	o := &sorted{scores: make([]float64, n), labels: make([]bool, n), cust: make([]int32, n), w: make([]float64, n),
		sq: make([]float64, n), ll: make([]float64, n)}
	lo, hi := LogLossEpsilon, 1-LogLossEpsilon
	for k, r := range idx {
		p := scores[r]
		o.scores[k], o.labels[k], o.cust[k] = p, w.labels[r], w.cust[r]
		q := min(max(p, lo), hi)
		if o.labels[k] {
			o.sq[k], o.ll[k] = (p-1)*(p-1), -math.Log(q)
		} else {
			o.sq[k], o.ll[k] = p*p, -math.Log1p(-q)
		}
	}
	return o
}

// weigh sets the rows' weights from the customers' counts.
func (o *sorted) weigh(counts []float64) {
	for k, c := range o.cust {
		o.w[k] = counts[c]
	}
}

// auc returns the weighted Mann–Whitney AUC (ties count ½) of the current
// weights; NaN with one class.
func (o *sorted) auc() float64 {
	var num, negBelow, wp, wn float64
	n := len(o.scores)
	for i := 0; i < n; {
		j := i
		var gp, gn float64
		for ; j < n && o.scores[j] == o.scores[i]; j++ {
			if o.labels[j] {
				gp += o.w[j]
			} else {
				gn += o.w[j]
			}
		}
		num += gp * (negBelow + gn/2)
		negBelow += gn
		wp += gp
		wn += gn
		i = j
	}
	if wp == 0 || wn == 0 {
		return math.NaN()
	}
	return num / (wp * wn)
}

// ap returns the weighted average precision (scikit-learn's steps, tied
// scores entering together); NaN without positives.
func (o *sorted) ap() float64 {
	var wp float64
	for k, y := range o.labels {
		if y {
			wp += o.w[k]
		}
	}
	if wp == 0 {
		return math.NaN()
	}
	var tp, fp, prevRecall, ap float64
	for i := len(o.scores) - 1; i >= 0; {
		j := i
		for ; j >= 0 && o.scores[j] == o.scores[i]; j-- {
			if o.labels[j] {
				tp += o.w[j]
			} else {
				fp += o.w[j]
			}
		}
		if tp+fp > 0 {
			recall := tp / wp
			ap += (recall - prevRecall) * tp / (tp + fp)
			prevRecall = recall
		}
		i = j
	}
	return ap
}

// brierAndLogLoss returns both probability scores of the current weights.
func (o *sorted) brierAndLogLoss() (float64, float64) {
	var sb, sl, n float64
	for k, wk := range o.w {
		sb += wk * o.sq[k]
		sl += wk * o.ll[k]
		n += wk
	}
	return sb / n, sl / n
}
