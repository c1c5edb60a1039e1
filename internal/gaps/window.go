package gaps

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/problem"
	"ebb/internal/survival"
)

// Method names a way of deriving X.
type Method string

const (
	MeanGap   Method = "mean-gap"
	PooledGap Method = "pooled-gap"
	Censored  Method = "censored"
)

// Methods lists the methods in the order pages show them.
var Methods = []Method{MeanGap, PooledGap, Censored}

// ParseMethod reads a method name.
func ParseMethod(s string) (Method, error) {
	for _, m := range Methods {
		if string(m) == s {
			return m, nil
		}
	}
	return "", problem.New(problem.Invalid, "unknown method %q (want mean-gap, pooled-gap or censored)", s)
}

// Options configure Derive. Zero values take the defaults.
type Options struct {
	Percentile   float64 // q in (0, 100]; default 90
	LookbackDays int     // L; default 365
	CapDays      int     // τ of the censoring-aware method; default 365
	FollowUpDays int     // W of the sensitivity table; default 365
	Bootstrap    int     // replicates of the censoring-aware band; default 200
	Seed         uint64  // of the bootstrap
}

// Resolved returns the options with every zero value replaced by its default.
func (o Options) Resolved() Options {
	if o.Percentile == 0 {
		o.Percentile = 90
	}
	if o.LookbackDays == 0 {
		o.LookbackDays = 365
	}
	if o.CapDays == 0 {
		o.CapDays = 365
	}
	if o.FollowUpDays == 0 {
		o.FollowUpDays = 365
	}
	if o.Bootstrap == 0 {
		o.Bootstrap = 200
	}
	return o
}

func (o Options) check() error {
	switch {
	case math.IsNaN(o.Percentile) || o.Percentile <= 0 || o.Percentile > 100:
		return problem.New(problem.Invalid, "the percentile must be above 0 and at most 100")
	case o.LookbackDays < 1 || o.LookbackDays > 3650:
		return problem.New(problem.Invalid, "the look-back must be 1 to 3650 days")
	case o.CapDays < 1 || o.CapDays > 3650:
		return problem.New(problem.Invalid, "the cap τ must be 1 to 3650 days")
	case o.FollowUpDays < 1 || o.FollowUpDays > 3650:
		return problem.New(problem.Invalid, "the follow-up W must be 1 to 3650 days")
	case o.Bootstrap < 0 || o.Bootstrap > 10000:
		return problem.New(problem.Invalid, "the bootstrap takes 0 to 10000 replicates")
	}
	return nil
}

// Window is one method's answer.
type Window struct {
	Method     Method
	Percentile float64
	OK         bool    // false when the data cannot support the method; Reason says why
	Reason     string  // a sentence for the page when !OK
	Value      float64 // the unrounded value
	Days       int     // X, rounded up to whole days
	// Band is the bootstrap 95% interval of Days (censoring-aware only).
	BandLow, BandHigh int
	HasBand           bool

	CustomersUsed int // customers whose gaps the method used
	Episodes      int // gaps (or episodes, censored ones included) used
	Censored      int // open gaps among Episodes (censoring-aware only)
	// SingleOrderCustomers have one order day in the look-back: reported,
	// never silently dropped (the mean-gap and pooled-gap methods cannot use
	// them; the censoring-aware method counts their open gap).
	SingleOrderCustomers int
	// OutsideLookback customers have no order day in the look-back at all.
	OutsideLookback int
	Sentence        string // the method's answer in one plain sentence
}

// minFor is how many values a percentile needs to mean something: at least
// 30, and enough that 1 − q leaves ten values above it (common practice,
// not a published rule).
func minFor(q float64) int {
	n := 30
	if q < 100 {
		if m := int(math.Ceil(10/(1-q/100) - 1e-9)); m > n && m < 100000 {
			n = m
		}
	}
	return n
}

// lookback describes the look-back period (from, to]: to is data_through.
type lookback struct{ from, to civil.Date }

func newLookback(h *history.History, days int) lookback {
	to := h.DataThrough()
	return lookback{from: to - civil.Date(days), to: to}
}

// inL returns the customer's order days in the look-back period.
func (l lookback) inL(days []civil.Date) []civil.Date {
	lo, _ := slices.BinarySearch(days, l.from+1)
	hi, _ := slices.BinarySearch(days, l.to+1)
	return days[lo:hi]
}

// Derive runs every method on h with the options given. The look-back
// longer than the data is not an error but is said in each sentence.
func Derive(h *history.History, opt Options) ([]Window, error) {
	opt = opt.Resolved()
	if err := opt.check(); err != nil {
		return nil, err
	}
	return []Window{meanGap(h, opt), pooledGap(h, opt), censored(h, opt, false)}, nil
}

// DeriveSecondOrder runs the methods on first-to-second order gaps only:
// customers whose first order day is in the look-back.
func DeriveSecondOrder(h *history.History, opt Options) ([]Window, error) {
	opt = opt.Resolved()
	if err := opt.check(); err != nil {
		return nil, err
	}
	l := newLookback(h, opt.LookbackDays)
	var firsts []float64
	w := Window{Method: PooledGap, Percentile: opt.Percentile}
	for c := 0; c < h.Customers(); c++ {
		days := h.Days(c)
		if len(days) == 0 || days[0] <= l.from || days[0] > l.to {
			continue
		}
		if len(days) == 1 {
			w.SingleOrderCustomers++
			continue
		}
		if days[1] <= l.to {
			firsts = append(firsts, float64(days[1]-days[0]))
		}
	}
	w.CustomersUsed, w.Episodes = len(firsts), len(firsts)
	percentileWindow(&w, firsts, opt.Percentile, "first-to-second order gaps",
		"%g%% of customers who ordered a second time did so within %d days of their first order")
	return []Window{w, censored(h, opt, true)}, nil
}

func percentileWindow(w *Window, values []float64, q float64, what, sentence string) {
	if need := minFor(q); len(values) < need {
		w.Reason = fmt.Sprintf("only %d %s in the look-back period; at least %d are needed for a %gth percentile", len(values), what, need, q)
		return
	}
	w.Value = Quantile(sortedCopy(values), q/100)
	w.Days = max(1, ceilDays(w.Value))
	w.OK = true
	w.Sentence = fmt.Sprintf(sentence, q, w.Days)
}

// eachRepeat calls fn with the look-back order days of every customer who
// has two or more of them, and counts the others in w.
func eachRepeat(h *history.History, l lookback, w *Window, fn func(days []civil.Date)) {
	for c := 0; c < h.Customers(); c++ {
		all := h.Days(c)
		if len(all) == 0 {
			continue
		}
		switch days := l.inL(all); len(days) {
		case 0:
			w.OutsideLookback++
		case 1:
			w.SingleOrderCustomers++
		default:
			w.CustomersUsed++
			fn(days)
		}
	}
}

func meanGap(h *history.History, opt Options) Window {
	w := Window{Method: MeanGap, Percentile: opt.Percentile}
	var means []float64
	eachRepeat(h, newLookback(h, opt.LookbackDays), &w, func(days []civil.Date) {
		means = append(means, float64(days[len(days)-1]-days[0])/float64(len(days)-1))
		w.Episodes += len(days) - 1
	})
	percentileWindow(&w, means, opt.Percentile, "customers with two order days",
		"%g%% of repeat customers' average gap between orders is %d days or shorter")
	return w
}

func pooledGap(h *history.History, opt Options) Window {
	w := Window{Method: PooledGap, Percentile: opt.Percentile}
	var gaps []float64
	eachRepeat(h, newLookback(h, opt.LookbackDays), &w, func(days []civil.Date) {
		for i := 1; i < len(days); i++ {
			gaps = append(gaps, float64(days[i]-days[i-1]))
		}
	})
	w.Episodes = len(gaps)
	percentileWindow(&w, gaps, opt.Percentile, "gaps between order days",
		"%g%% of gaps between two orders of the same customer are %d days or shorter")
	return w
}

// episode is one gap of one customer: its length and whether it closed.
type episode struct {
	days  int32
	event bool
}

// censoredEpisodes collects each customer's episodes (gaps starting with an
// order day in L, the last one open and censored at data_through). With
// firstOnly, only the gap after the first order day, for customers whose
// first order day is in L.
func censoredEpisodes(h *history.History, l lookback, firstOnly bool, w *Window) (starts []int32, eps []episode) {
	for c := 0; c < h.Customers(); c++ {
		all := h.Days(c)
		if len(all) == 0 {
			continue
		}
		if firstOnly {
			if all[0] <= l.from || all[0] > l.to {
				continue
			}
			starts = append(starts, int32(len(eps)))
			if len(all) > 1 && all[1] <= l.to {
				eps = append(eps, episode{int32(all[1] - all[0]), true})
			} else {
				w.SingleOrderCustomers++
				eps = append(eps, episode{int32(l.to - all[0]), false})
			}
			continue
		}
		days := l.inL(all)
		if len(days) == 0 {
			w.OutsideLookback++
			continue
		}
		if len(days) == 1 {
			w.SingleOrderCustomers++
		}
		starts = append(starts, int32(len(eps)))
		lo := len(all) - len(days) // index of the first day in L
		for i := lo; i < len(all); i++ {
			if i+1 < len(all) && all[i+1] <= l.to {
				eps = append(eps, episode{int32(all[i+1] - all[i]), true})
			} else {
				eps = append(eps, episode{int32(l.to - all[i]), false})
				break
			}
		}
	}
	return starts, eps
}

// censoredX is X = the smallest t with F(t) ≥ q·F(τ) on a curve.
func censoredX(b *survival.Builder, q float64, capDays int) (float64, bool) {
	cv := b.Curve()
	target := q * cv.CDF(float64(capDays))
	if target <= 0 {
		return 0, false
	}
	return cv.FirstTimeCDFAtLeast(target)
}

func censored(h *history.History, opt Options, firstOnly bool) Window {
	l := newLookback(h, opt.LookbackDays)
	w := Window{Method: Censored, Percentile: opt.Percentile}
	starts, eps := censoredEpisodes(h, l, firstOnly, &w)
	w.CustomersUsed, w.Episodes = len(starts), len(eps)
	events := 0
	var b survival.Builder
	for _, e := range eps {
		if !e.event {
			w.Censored++
		} else {
			events++
		}
		b.Add(int(e.days), e.event)
	}
	what := "reorders"
	if firstOnly {
		what = "second orders"
	}
	if need := minFor(opt.Percentile); events < need {
		w.Reason = fmt.Sprintf("only %d %s in the look-back period; at least %d are needed", events, what, need)
		return w
	}
	q := opt.Percentile / 100
	x, ok := censoredX(&b, q, opt.CapDays)
	if !ok {
		w.Reason = fmt.Sprintf("no reorder within %d days in the look-back period", opt.CapDays)
		return w
	}
	w.Value, w.Days, w.OK = x, max(1, ceilDays(x)), true
	if firstOnly {
		w.Sentence = fmt.Sprintf("Of the first orders followed by a second within %d days, %g%% were followed within %d days, counting customers who have not ordered again yet.", opt.CapDays, opt.Percentile, w.Days)
	} else {
		w.Sentence = fmt.Sprintf("Of the reorders that happen within %d days, %g%% happen within %d days, counting the gaps still open today.", opt.CapDays, opt.Percentile, w.Days)
	}
	if opt.Bootstrap > 0 {
		w.BandLow, w.BandHigh, w.HasBand = bootstrapBand(starts, eps, q, opt)
	}
	return w
}

// bootstrapBand resamples customers with replacement (their episodes stay
// together) and returns the 2.5th and 97.5th percentiles of X.
func bootstrapBand(starts []int32, eps []episode, q float64, opt Options) (lo, hi int, ok bool) {
	rng := rand.New(rand.NewPCG(opt.Seed, 0x67617073))
	n := len(starts)
	counts := make([]int32, n)
	var b survival.Builder
	xs := make([]float64, 0, opt.Bootstrap)
	for r := 0; r < opt.Bootstrap; r++ {
		clear(counts)
		for i := 0; i < n; i++ {
			counts[rng.IntN(n)]++
		}
		b.Reset()
		for c, k := range counts {
			if k == 0 {
				continue
			}
			end := len(eps)
			if c+1 < n {
				end = int(starts[c+1])
			}
			for _, e := range eps[starts[c]:end] {
				b.AddN(int(e.days), e.event, int(k))
			}
		}
		if x, ok := censoredX(&b, q, opt.CapDays); ok {
			xs = append(xs, float64(ceilDays(x)))
		}
	}
	if len(xs) < opt.Bootstrap/2 {
		return 0, 0, false
	}
	slices.Sort(xs)
	return ceilDays(Quantile(xs, 0.025)), ceilDays(Quantile(xs, 0.975)), true
}
