package evaluate

import (
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"sync"

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
	ivs, _, err := BootstrapMany([][]float64{probs}, labels, clusters, -1, opt)
	if err != nil {
		return Intervals{}, err
	}
	return ivs[0], nil
}

// BootstrapMany is BootstrapAll for several models' probabilities on the
// same rows, with one set of resampled customers for all of them: each
// model's intervals equal BootstrapAll's, and, when ref ≥ 0, vsRef[m] is
// the paired interval of model m's ROC AUC minus model ref's (as PairedAUC
// gives it; vsRef[ref] is left zero). Replicates are drawn in order on one
// goroutine and evaluated on every core, so results do not depend on the
// number of cores.
func BootstrapMany(probs [][]float64, labels []bool, clusters []int, ref int, opt BootstrapOptions) (ivs []Intervals, vsRef []Interval, err error) {
	if len(probs) == 0 || ref >= len(probs) {
		return nil, nil, problem.New(problem.Invalid, "No models to evaluate, or no model %d to compare with.", ref)
	}
	for _, p := range probs {
		if _, err := probabilities(p, labels); err != nil {
			return nil, nil, err
		}
	}
	w, err := newWeighted(probs[0], labels, clusters, opt)
	if err != nil {
		return nil, nil, err
	}
	os := make([]*sorted, len(probs))
	for m, p := range probs {
		if len(p) != len(labels) {
			return nil, nil, problem.New(problem.Invalid, "Model %d scored %d rows, not %d; every model needs the same rows.", m+1, len(p), len(labels))
		}
		os[m] = w.sort(p)
	}
	metrics := [4]Metric{ROCAUC, AveragePrecision, Brier, LogLoss}
	est := make([][4]float64, len(probs))
	for m, p := range probs {
		for k := range 4 {
			if est[m][k], err = metrics[k](p, labels); err != nil {
				return nil, nil, err
			}
		}
	}
	vals := w.run(func() func(counts []float64) []float64 {
		return func(counts []float64) []float64 {
			out := make([]float64, 4*len(os))
			for m, o := range os {
				out[4*m], out[4*m+1], out[4*m+2], out[4*m+3] = o.metrics(counts)
			}
			return out
		}
	})
	ivs = make([]Intervals, len(probs))
	for m := range probs {
		var iv [4]Interval
		for k := range 4 {
			if iv[k], err = w.interval(est[m][k], vals, func(v []float64) float64 { return v[4*m+k] }); err != nil {
				return nil, nil, err
			}
		}
		ivs[m] = Intervals{ROCAUC: iv[0], AveragePrecision: iv[1], Brier: iv[2], LogLoss: iv[3]}
	}
	if ref >= 0 {
		vsRef = make([]Interval, len(probs))
		for m := range probs {
			if m == ref {
				continue
			}
			if vsRef[m], err = w.interval(est[m][0]-est[ref][0], vals, func(v []float64) float64 { return v[4*m] - v[4*ref] }); err != nil {
				return nil, nil, err
			}
		}
	}
	return ivs, vsRef, nil
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
	vals := w.run(func() func(counts []float64) []float64 {
		return func(counts []float64) []float64 {
			x, _, _, _ := oa.metrics(counts)
			y, _, _, _ := ob.metrics(counts)
			return []float64{x - y}
		}
	})
	return w.interval(a-b, vals, func(v []float64) float64 { return v[0] })
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
// Bootstrap draws them) on this goroutine and evaluates each from the
// customers' counts on every core; newEval gives each worker its own
// evaluator (with its own scratch). Results are in replicate order.
func (w *weighted) run(newEval func() func(counts []float64) []float64) [][]float64 {
	workers := max(runtime.GOMAXPROCS(0), 1)
	type job struct {
		r      int
		counts []float64
	}
	jobs := make(chan job, workers)
	free := make(chan []float64, 2*workers)
	for range 2 * workers {
		free <- make([]float64, w.nc)
	}
	out := make([][]float64, w.reps)
	var wg sync.WaitGroup
	for range workers {
		eval := newEval()
		wg.Go(func() {
			for j := range jobs {
				out[j.r] = eval(j.counts)
				free <- j.counts
			}
		})
	}
	for r := range w.reps {
		counts := <-free
		clear(counts)
		for range w.nc {
			counts[w.rng.IntN(w.nc)]++
		}
		jobs <- job{r, counts}
	}
	close(jobs)
	wg.Wait()
	return out
}

// interval is the percentile interval of metric m over the replicates;
// NaN replicates (one class drawn) are skipped as Bootstrap skips them.
func (w *weighted) interval(est float64, vals [][]float64, metric func([]float64) float64) (Interval, error) {
	var xs []float64
	skipped := 0
	for _, v := range vals {
		x := metric(v)
		if math.IsNaN(x) {
			skipped++
			continue
		}
		xs = append(xs, x)
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
	o := &sorted{scores: make([]float64, n), labels: make([]bool, n), cust: make([]int32, n),
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

// metrics returns ROC AUC, average precision, Brier score and log loss of
// the rows weighted by their customers' counts, in one pass from the
// highest score down (the weights are read as they are needed; on this kind
// of machine the passes over memory, not the arithmetic, are the cost).
// Going down, a tie group of gp positive and gn negative weight adds
// gn·(positives above + gp/2) rightly ordered pairs (ties count ½), so
// AUC = that/(P·N);
// average precision is Σ gp·precision/P with P factored out to the end.
// NaN where the metric is undefined for the replicate, as auc and ap give.
func (o *sorted) metrics(counts []float64) (auc, ap, brier, logLoss float64) {
	var right, posAbove, negAbove, apSum, sb, sl float64
	n := len(o.scores)
	for i := n - 1; i >= 0; {
		j := i
		var gp, gn float64
		for ; j >= 0 && o.scores[j] == o.scores[i]; j-- {
			w := counts[o.cust[j]]
			if o.labels[j] {
				gp += w
			} else {
				gn += w
			}
			sb += w * o.sq[j]
			sl += w * o.ll[j]
		}
		right += gn * (posAbove + gp/2)
		posAbove += gp
		negAbove += gn
		if gp > 0 {
			apSum += gp * posAbove / (posAbove + negAbove)
		}
		i = j
	}
	total := posAbove + negAbove
	brier, logLoss = sb/total, sl/total
	auc, ap = math.NaN(), math.NaN()
	if posAbove > 0 && negAbove > 0 {
		auc = right / (posAbove * negAbove)
	}
	if posAbove > 0 {
		ap = apSum / posAbove
	}
	return auc, ap, brier, logLoss
}
