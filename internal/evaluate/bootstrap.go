package evaluate

import (
	"math"
	"math/rand/v2"
	"slices"

	"ebb/internal/problem"
)

// DefaultReplicates is the number of bootstrap resamples used when
// BootstrapOptions.Replicates is 0. Two hundred is a common working choice
// that keeps an interval affordable on large test sets; Efron & Tibshirani
// (1993, An Introduction to the Bootstrap — from memory) advise about 1000
// or more for percentile intervals, whose ends wobble from run to run with
// fewer, so pass more when the ends matter.
const DefaultReplicates = 200

// Metric computes one figure from scores and labels, e.g. ROCAUC,
// AveragePrecision, Brier or LogLoss.
type Metric func(scores []float64, labels []bool) (float64, error)

// BootstrapOptions sets the resampling. The same options and data always
// give the same interval.
type BootstrapOptions struct {
	Replicates   int     // resamples; 0 means DefaultReplicates
	Level        float64 // confidence level; 0 means 0.95
	Seed1, Seed2 uint64  // seeds of the math/rand/v2 PCG generator
}

// Interval is a bootstrap percentile interval around an estimate.
type Interval struct {
	Estimate     float64 // the metric on the data as given
	Lower, Upper float64 // the (1−Level)/2 and (1+Level)/2 quantiles (Hyndman & Fan definition 7) of the replicates
	Replicates   int     // replicates that gave a value
	Skipped      int     // replicates the metric refused (e.g. a resample with one class)
}

// Bootstrap returns a percentile interval for metric, resampling customers
// rather than rows: clusters holds a customer id per row, and each
// replicate draws as many customers as there are, with replacement, taking
// all rows of each drawn customer. Rows of one customer (several list
// dates) are correlated, so resampling rows would make intervals too
// narrow. Replicates the metric refuses are skipped and counted; when more
// than a tenth are refused the interval is refused too.
func Bootstrap(scores []float64, labels []bool, clusters []int, metric Metric, opt BootstrapOptions) (Interval, error) {
	return bootstrap(labels, clusters, opt, func(rows []int32, buf *buffers) (float64, error) {
		if rows == nil {
			return metric(scores, labels)
		}
		s, l := buf.take(rows, scores, labels)
		return metric(s, l)
	}, len(scores))
}

// PairedBootstrap returns a percentile interval for metric(A) − metric(B),
// two models' scores of the same rows: each replicate evaluates both models
// on the same resampled customers, so the interval reflects the difference
// and not the shared sampling noise.
func PairedBootstrap(scoresA, scoresB []float64, labels []bool, clusters []int, metric Metric, opt BootstrapOptions) (Interval, error) {
	if len(scoresA) != len(scoresB) {
		return Interval{}, problem.New(problem.Invalid, "The two models scored %d and %d rows; a paired comparison needs the same rows.", len(scoresA), len(scoresB))
	}
	var bufB buffers
	return bootstrap(labels, clusters, opt, func(rows []int32, buf *buffers) (float64, error) {
		if rows == nil {
			return diff(metric, scoresA, scoresB, labels, labels)
		}
		sa, la := buf.take(rows, scoresA, labels)
		sb, lb := bufB.take(rows, scoresB, labels)
		return diff(metric, sa, sb, la, lb)
	}, len(scoresA))
}

func diff(metric Metric, sa, sb []float64, la, lb []bool) (float64, error) {
	a, err := metric(sa, la)
	if err != nil {
		return 0, err
	}
	b, err := metric(sb, lb)
	if err != nil {
		return 0, err
	}
	return a - b, nil
}

type buffers struct {
	s []float64
	l []bool
}

func (b *buffers) take(rows []int32, scores []float64, labels []bool) ([]float64, []bool) {
	b.s, b.l = b.s[:0], b.l[:0]
	for _, r := range rows {
		b.s = append(b.s, scores[r])
		b.l = append(b.l, labels[r])
	}
	return b.s, b.l
}

// bootstrap runs the resampling; eval(nil) evaluates the original data.
func bootstrap(labels []bool, clusters []int, opt BootstrapOptions, eval func(rows []int32, buf *buffers) (float64, error), n int) (Interval, error) {
	if n != len(labels) || n != len(clusters) {
		return Interval{}, problem.New(problem.Invalid, "There are %d scores, %d labels and %d customer ids; each row needs one of each.", n, len(labels), len(clusters))
	}
	if n > math.MaxInt32 {
		return Interval{}, problem.New(problem.Invalid, "Too many rows (%d) to bootstrap.", n)
	}
	reps := opt.Replicates
	if reps == 0 {
		reps = DefaultReplicates
	}
	level := opt.Level
	if level == 0 {
		level = 0.95
	}
	if reps < 1 {
		return Interval{}, problem.New(problem.Invalid, "The bootstrap needs at least one replicate, not %d.", reps)
	}
	if !(level > 0 && level < 1) {
		return Interval{}, problem.New(problem.Invalid, "The confidence level must lie strictly between 0 and 1, not %v.", level)
	}
	var buf buffers
	est, err := eval(nil, &buf)
	if err != nil {
		return Interval{}, err
	}

	// Rows by customer, customers numbered by first appearance (CSR), so
	// the resampling depends only on the data and the seed.
	id := make(map[int]int32)
	of := make([]int32, n)
	var size []int32
	for i, c := range clusters {
		k, ok := id[c]
		if !ok {
			k = int32(len(size))
			id[c] = k
			size = append(size, 0)
		}
		of[i] = k
		size[k]++
	}
	start := make([]int32, len(size)+1)
	for k, s := range size {
		start[k+1] = start[k] + s
	}
	members := make([]int32, n)
	fill := slices.Clone(start[:len(size)])
	for i, k := range of {
		members[fill[k]] = int32(i)
		fill[k]++
	}

	rng := rand.New(rand.NewPCG(opt.Seed1, opt.Seed2))
	nc := len(size)
	rows := make([]int32, 0, n)
	vals := make([]float64, 0, reps)
	skipped := 0
	for range reps {
		rows = rows[:0]
		for range nc {
			k := rng.IntN(nc)
			rows = append(rows, members[start[k]:start[k+1]]...)
		}
		v, err := eval(rows, &buf)
		if err != nil || math.IsNaN(v) {
			skipped++
			continue
		}
		vals = append(vals, v)
	}
	if len(vals) == 0 || skipped*10 > reps {
		return Interval{}, problem.New(problem.Invalid, "Too few customers for a bootstrap interval: %d of %d resamples could not be evaluated (for example, they held only one class).", skipped, reps)
	}
	slices.Sort(vals)
	alpha := (1 - level) / 2
	return Interval{
		Estimate: est,
		Lower:    quantile7(vals, alpha), Upper: quantile7(vals, 1-alpha),
		Replicates: len(vals), Skipped: skipped,
	}, nil
}
