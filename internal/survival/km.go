package survival

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
)

// ErrBadTime is wrapped by the error a constructor returns for an episode
// whose time is negative, NaN or infinite.
var ErrBadTime = errors.New("episode time must be a finite number ≥ 0")

// Curve is a Kaplan–Meier estimate: the right-continuous step function
// S(t) = ∏_{t_j ≤ t} (1 − d_j/n_j) over the distinct event times t_j, with
// its Greenwood variance and pointwise confidence intervals.
//
// Times are in the unit of the input (days for KaplanMeierDays and
// Builder). A Curve is immutable and safe for concurrent use. Its intervals
// use ConfLog at DefaultConfLevel unless changed with WithConfidence.
type Curve struct {
	n int // episodes

	// Every distinct observed time, ascending, and what happened there.
	times    []float64
	atRisk   []int // episodes with time ≥ times[i]
	events   []int
	censored []int

	// The steps: one per distinct event time.
	stepIdx  []int     // index into times
	stepTime []float64 // times[stepIdx[j]]
	surv     []float64 // S(stepTime[j])
	gw       []float64 // Greenwood sum Σ d/(n(n−d)) up to stepTime[j]; +Inf once d = n

	conf  ConfType
	level float64
	z     float64
}

// Row is one line of the Kaplan–Meier table at a distinct event time, like
// a line of R's summary(survfit(…)).
type Row struct {
	Time   float64 // the event time, in the input's unit
	NRisk  int     // episodes with time ≥ Time (censored at Time count: they are at risk)
	NEvent int     // events at Time
	// NCensor is the number censored in [Time, next event time); for the
	// last row, all censored at or after Time. So the next row's NRisk is
	// NRisk − NEvent − NCensor. (R's summary counts censorings in
	// (previous event time, Time] instead and drops those after the last
	// event.) Censorings before the first event time are N() − first NRisk.
	NCensor int
	Surv    float64 // S(Time), in [0, 1]
	// StdErr is the Greenwood standard error of S: S·√G. NaN where the
	// curve has dropped to 0 (an event time with NEvent = NRisk), as in R.
	StdErr float64
	// Lower and Upper are the pointwise confidence limits of S(Time) for the
	// curve's ConfType and level; NaN where undefined (see ConfType).
	Lower, Upper float64
}

// Point is the estimate at an arbitrary time, like a line of R's
// summary(fit, times = t).
type Point struct {
	Time         float64 // the time asked for
	NRisk        int     // episodes with time ≥ Time
	Surv         float64 // S(Time): the value of the last step at or before Time (1 before the first event)
	StdErr       float64 // Greenwood standard error of Surv (0 before the first event)
	Lower, Upper float64 // confidence limits of Surv; see Row
}

// KaplanMeier estimates the survival curve from parallel slices: times[i]
// is the duration of episode i (≥ 0, in any unit) and events[i] is true
// when the episode ended in the event and false when it was censored at
// times[i]. It sorts a copy of the input: O(n log n) time, O(n) memory.
// For whole-day times KaplanMeierDays or a Builder is faster.
//
// An episode censored at the same time as an event is at risk at that time
// (events come first, as in R). No episodes give a curve with S = 1
// everywhere. A negative, NaN or infinite time is an error wrapping
// ErrBadTime. KaplanMeier panics if the slices differ in length: that is a
// programming error, not bad data.
func KaplanMeier(times []float64, events []bool) (*Curve, error) {
	if len(times) != len(events) {
		panic(fmt.Sprintf("survival: KaplanMeier with %d times and %d event flags", len(times), len(events)))
	}
	type obs struct {
		t  float64
		ev bool
	}
	all := make([]obs, len(times))
	for i, t := range times {
		if err := checkTime(i, t); err != nil {
			return nil, err
		}
		if t == 0 {
			t = 0 // −0 reads as 0
		}
		all[i] = obs{t, events[i]}
	}
	slices.SortFunc(all, func(a, b obs) int {
		switch {
		case a.t < b.t:
			return -1
		case a.t > b.t:
			return 1
		}
		return 0
	})
	var ts []float64
	var ev, ce []int
	for i, o := range all {
		if i == 0 || o.t != all[i-1].t {
			ts = append(ts, o.t)
			ev = append(ev, 0)
			ce = append(ce, 0)
		}
		if o.ev {
			ev[len(ev)-1]++
		} else {
			ce[len(ce)-1]++
		}
	}
	return fromCounts(ts, ev, ce), nil
}

func checkTime(i int, t float64) error {
	if t < 0 || math.IsNaN(t) || math.IsInf(t, 0) {
		return fmt.Errorf("kaplan-meier: episode %d has time %v: %w", i, t, ErrBadTime)
	}
	return nil
}

// fromCounts builds a curve from distinct ascending times and the events
// and censorings at each (each time has at least one of either).
func fromCounts(times []float64, events, censored []int) *Curve {
	n := 0
	for i := range times {
		n += events[i] + censored[i]
	}
	c := &Curve{
		n:        n,
		times:    times,
		atRisk:   make([]int, len(times)),
		events:   events,
		censored: censored,
		conf:     ConfLog,
		level:    DefaultConfLevel,
		z:        normalQuantile(DefaultConfLevel),
	}
	risk := n
	s, g := 1.0, 0.0
	for i := range times {
		c.atRisk[i] = risk
		if d := events[i]; d > 0 {
			s *= float64(risk-d) / float64(risk)
			if d == risk {
				g = math.Inf(1)
			} else {
				g += float64(d) / (float64(risk) * float64(risk-d))
			}
			c.stepIdx = append(c.stepIdx, i)
			c.stepTime = append(c.stepTime, times[i])
			c.surv = append(c.surv, s)
			c.gw = append(c.gw, g)
		}
		risk -= events[i] + censored[i]
	}
	return c
}

// WithConfidence returns a copy of c whose intervals (in Rows, PointAt and
// QuantileCI) use transformation ct and two-sided coverage level. The copy
// shares c's data. It panics if level is not strictly between 0 and 1 or ct
// is not one of the ConfType constants (programming errors).
func (c *Curve) WithConfidence(ct ConfType, level float64) *Curve {
	if !(level > 0 && level < 1) {
		panic(fmt.Sprintf("survival: confidence level %v not in (0, 1)", level))
	}
	if ct != ConfLog && ct != ConfLogLog && ct != ConfPlain {
		panic(fmt.Sprintf("survival: unknown confidence type %d", int(ct)))
	}
	cp := *c
	cp.conf, cp.level, cp.z = ct, level, normalQuantile(level)
	return &cp
}

// Confidence returns the transformation and two-sided level of c's
// intervals.
func (c *Curve) Confidence() (ConfType, float64) { return c.conf, c.level }

// N returns the number of episodes.
func (c *Curve) N() int { return c.n }

// Events returns the number of episodes that ended in the event.
func (c *Curve) Events() int {
	e := 0
	for _, d := range c.events {
		e += d
	}
	return e
}

// MaxTime returns the largest observed time (event or censored), or 0 for a
// curve without episodes.
func (c *Curve) MaxTime() float64 {
	if len(c.times) == 0 {
		return 0
	}
	return c.times[len(c.times)-1]
}

// Rows returns the table of the curve: one Row per distinct event time, in
// time order. It is empty when there are no events. The slice is new on
// each call.
func (c *Curve) Rows() []Row {
	rows := make([]Row, len(c.stepIdx))
	for j, i := range c.stepIdx {
		end := len(c.times)
		if j+1 < len(c.stepIdx) {
			end = c.stepIdx[j+1]
		}
		cens := 0
		for k := i; k < end; k++ {
			cens += c.censored[k]
		}
		lo, hi := limits(c.conf, c.z, c.surv[j], c.gw[j])
		rows[j] = Row{
			Time:    c.stepTime[j],
			NRisk:   c.atRisk[i],
			NEvent:  c.events[i],
			NCensor: cens,
			Surv:    c.surv[j],
			StdErr:  c.surv[j] * math.Sqrt(c.gw[j]),
			Lower:   lo,
			Upper:   hi,
		}
	}
	return rows
}

// step returns the index of the last step at or before t, or −1 when t is
// before the first event time (or NaN).
func (c *Curve) step(t float64) int {
	return sort.Search(len(c.stepTime), func(j int) bool { return c.stepTime[j] > t }) - 1
}

// At returns S(t), the estimated probability that an episode lasts beyond
// t: 1 before the first event time (and for t < 0), otherwise the value of
// the last step at or before t (right-continuous). Past the largest event
// time it stays at the last step's value, also past MaxTime, where no
// episode is observed any more: callers that must not extrapolate compare
// t with MaxTime. At(NaN) is NaN.
func (c *Curve) At(t float64) float64 {
	if math.IsNaN(t) {
		return math.NaN()
	}
	if j := c.step(t); j >= 0 {
		return c.surv[j]
	}
	return 1
}

// CDF returns F(t) = 1 − S(t): the estimated share of episodes ended by the
// event within t. It is 0 before the first event time and NaN for NaN.
func (c *Curve) CDF(t float64) float64 { return 1 - c.At(t) }

// AtRisk returns the number of episodes with time ≥ t (censored at t
// included).
func (c *Curve) AtRisk(t float64) int {
	i := sort.SearchFloat64s(c.times, t)
	if i == len(c.times) {
		return 0
	}
	return c.atRisk[i]
}

// PointAt returns the estimate at time t with its standard error and
// confidence limits, as R's summary(fit, times = t) prints them. Before the
// first event time S = 1 and the standard error is 0, so the log and plain
// limits are 1 and the log-log limits NaN. It panics on NaN t.
func (c *Curve) PointAt(t float64) Point {
	if math.IsNaN(t) {
		panic("survival: PointAt(NaN)")
	}
	s, g := 1.0, 0.0
	if j := c.step(t); j >= 0 {
		s, g = c.surv[j], c.gw[j]
	}
	lo, hi := limits(c.conf, c.z, s, g)
	return Point{Time: t, NRisk: c.AtRisk(t), Surv: s, StdErr: s * math.Sqrt(g), Lower: lo, Upper: hi}
}

// RestrictedMean returns the restricted mean survival time up to tau: the
// area under S on [0, tau], in the input's time unit (R's print(fit,
// rmean = tau)). It is 0 for tau = 0. It panics when tau is negative or NaN.
func (c *Curve) RestrictedMean(tau float64) float64 {
	if !(tau >= 0) {
		panic(fmt.Sprintf("survival: RestrictedMean(%v) needs tau ≥ 0", tau))
	}
	area, prevT, prevS := 0.0, 0.0, 1.0
	for j, t := range c.stepTime {
		if t > tau {
			break
		}
		area += prevS * (t - prevT)
		prevT, prevS = t, c.surv[j]
	}
	return area + prevS*(tau-prevT)
}
