package survival

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

// z95 is R 4.2.2's qnorm(0.975) (shared reference README §2).
const z95 = 1.959963984540054

// Small cases worked out by hand. Each case lists the episodes as
// (time, E = event / C = censored) and the arithmetic in a comment. The
// medians and quantiles were also run through R 4.2.2, survival 3.5.3
// (quantile(survfit(Surv(t, e) ~ 1), probs = …)) for this package; they
// agree.
func TestRowsHandWorked(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name   string
		times  []float64
		events []bool
		want   []Row
	}{
		{
			// Nothing happens: no rows.
			name: "no episodes",
		},
		{
			// (3 C) (5 C) (5 C): no event, so no step; S = 1 throughout.
			name:   "all censored",
			times:  []float64{5, 3, 5},
			events: []bool{false, false, false},
		},
		{
			// (4 E): n = 1, d = 1, S = 1 − 1/1 = 0. Greenwood's term
			// d/(n(n − d)) = 1/0 is infinite: SE = 0·∞ is NaN and so are
			// the limits, as in R.
			name:   "single event",
			times:  []float64{4},
			events: []bool{true},
			want:   []Row{{Time: 4, NRisk: 1, NEvent: 1, NCensor: 0, Surv: 0, StdErr: nan, Lower: nan, Upper: nan}},
		},
		{
			// (2 E) (2 C) (3 E) (5 C) (5 E) (5 E) (8 C), given out of order.
			// t = 2: all 7 at risk; the episode censored at 2 is still at
			//   risk (events first). S = 6/7, G = 1/(7·6) = 1/42.
			//   Censored in [2, 3): the one at 2.
			// t = 3: n = 7 − 1 − 1 = 5, d = 1. S = 6/7 · 4/5 = 24/35,
			//   G = 1/42 + 1/(5·4) = 31/420. Censored in [3, 5): none.
			// t = 5: n = 4, d = 2. S = 24/35 · 2/4 = 12/35,
			//   G = 31/420 + 2/(4·2) = 136/420 = 34/105. Censored from 5 on:
			//   the one at 5 and the one at 8.
			// Log limits S·exp(∓z√G), upper capped at 1: at t = 2,
			// 6/7·exp(1.96·0.154) > 1, so Upper = 1 there; likewise at 3
			// (24/35·exp(1.96·0.272) = 1.17) and 5 (12/35·exp(1.96·0.569)
			// = 1.04).
			name:   "tied event and censoring",
			times:  []float64{5, 2, 8, 3, 2, 5, 5},
			events: []bool{true, true, false, true, false, false, true},
			want: []Row{
				{Time: 2, NRisk: 7, NEvent: 1, NCensor: 1, Surv: 6.0 / 7, StdErr: 6.0 / 7 * math.Sqrt(1.0/42),
					Lower: 6.0 / 7 * math.Exp(-z95*math.Sqrt(1.0/42)), Upper: 1},
				{Time: 3, NRisk: 5, NEvent: 1, NCensor: 0, Surv: 24.0 / 35, StdErr: 24.0 / 35 * math.Sqrt(31.0/420),
					Lower: 24.0 / 35 * math.Exp(-z95*math.Sqrt(31.0/420)), Upper: 1},
				{Time: 5, NRisk: 4, NEvent: 2, NCensor: 2, Surv: 12.0 / 35, StdErr: 12.0 / 35 * math.Sqrt(34.0/105),
					Lower: 12.0 / 35 * math.Exp(-z95*math.Sqrt(34.0/105)), Upper: 1},
			},
		},
		{
			// (1 E) (2 E) (4 C) (6 C): censored after the last event, so
			// the curve stops at 1/2 and never reaches 0.
			// t = 1: n = 4, S = 3/4, G = 1/(4·3) = 1/12.
			// t = 2: n = 3, S = 3/4 · 2/3 = 1/2, G = 1/12 + 1/(3·2) = 1/4,
			//   SE = 1/2 · 1/2 = 1/4; lower = 0.5·exp(−1.96·0.5) = 0.1877.
			name:   "censored after the last event",
			times:  []float64{1, 2, 4, 6},
			events: []bool{true, true, false, false},
			want: []Row{
				{Time: 1, NRisk: 4, NEvent: 1, NCensor: 0, Surv: 0.75, StdErr: 0.75 * math.Sqrt(1.0/12),
					Lower: 0.75 * math.Exp(-z95*math.Sqrt(1.0/12)), Upper: 1},
				{Time: 2, NRisk: 3, NEvent: 1, NCensor: 2, Surv: 0.5, StdErr: 0.25,
					Lower: 0.5 * math.Exp(-z95*0.5), Upper: 1},
			},
		},
		{
			// (0 E) (0 C) (1 E): an event at time 0 steps at 0.
			// t = 0: n = 3, d = 1, S = 2/3, G = 1/(3·2) = 1/6.
			// t = 1: n = 3 − 1 − 1 = 1, d = 1, S = 0.
			name:   "event at time zero",
			times:  []float64{0, 0, 1},
			events: []bool{true, false, true},
			want: []Row{
				{Time: 0, NRisk: 3, NEvent: 1, NCensor: 1, Surv: 2.0 / 3, StdErr: 2.0 / 3 * math.Sqrt(1.0/6),
					Lower: 2.0 / 3 * math.Exp(-z95*math.Sqrt(1.0/6)), Upper: 1},
				{Time: 1, NRisk: 1, NEvent: 1, NCensor: 0, Surv: 0, StdErr: nan, Lower: nan, Upper: nan},
			},
		},
	}
	for _, tt := range tests {
		for _, bl := range builders {
			t.Run(key(tt.name, bl.name), func(t *testing.T) {
				c := bl.build(t, tt.times, tt.events)
				if c.N() != len(tt.times) {
					t.Errorf("N() = %d, want %d", c.N(), len(tt.times))
				}
				rows := c.Rows()
				if len(rows) != len(tt.want) {
					t.Fatalf("Rows() has %d rows, want %d: %+v", len(rows), len(tt.want), rows)
				}
				for i, w := range tt.want {
					checkRow(t, rows[i], w, 1e-15)
				}
			})
		}
	}
}

func checkRow(t *testing.T, got, want Row, tol float64) {
	t.Helper()
	if got.Time != want.Time || got.NRisk != want.NRisk || got.NEvent != want.NEvent || got.NCensor != want.NCensor {
		t.Errorf("Row (Time, NRisk, NEvent, NCensor) = (%v, %d, %d, %d), want (%v, %d, %d, %d)",
			got.Time, got.NRisk, got.NEvent, got.NCensor, want.Time, want.NRisk, want.NEvent, want.NCensor)
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"Surv", got.Surv, want.Surv}, {"StdErr", got.StdErr, want.StdErr},
		{"Lower", got.Lower, want.Lower}, {"Upper", got.Upper, want.Upper},
	} {
		if !near(c.got, c.want, tol) {
			t.Errorf("t=%v: %s = %.17g, want %.17g", got.Time, c.name, c.got, c.want)
		}
	}
}

// The step function and the functions read from it, on the hand cases of
// TestRowsHandWorked.
func TestAtHandWorked(t *testing.T) {
	tied := mustCurve(t, []float64{5, 2, 8, 3, 2, 5, 5}, []bool{true, true, false, true, false, false, true})
	open := mustCurve(t, []float64{1, 2, 4, 6}, []bool{true, true, false, false})
	empty := mustCurve(t, nil, nil)
	tests := []struct {
		name     string
		c        *Curve
		t        float64
		surv     float64
		atRisk   int
		restMean float64 // RestrictedMean(t) when t ≥ 0
	}{
		// tied: S = 1 on [0, 2), 6/7 on [2, 3), 24/35 on [3, 5), 12/35 from 5.
		// Area to t: 2 + 6/7·(t − 2) on [2, 3); 2 + 6/7 + 24/35·(t − 3) on [3, 5).
		{"before first event", tied, 1.5, 1, 7, 1.5},
		{"negative time", tied, -1, 1, 7, math.NaN()},
		{"at an event time (right-continuous)", tied, 2, 6.0 / 7, 7, 2},
		{"between steps", tied, 2.5, 6.0 / 7, 5, 2 + 6.0/7*0.5},
		{"just before a step", tied, math.Nextafter(3, 0), 6.0 / 7, 5, 2 + 6.0/7*(math.Nextafter(3, 0)-2)},
		{"at the last event", tied, 5, 12.0 / 35, 4, 2 + 6.0/7 + 24.0/35*2},
		{"after the last observed time", tied, 100, 12.0 / 35, 0, 2 + 6.0/7 + 24.0/35*2 + 12.0/35*95},
		// open: S = 1, 3/4 from 1, 1/2 from 2 on, also past 6.
		{"flat after censoring", open, 5, 0.5, 1, 1 + 0.75 + 0.5*3},
		{"past the largest time", open, 1e9, 0.5, 0, 1 + 0.75 + 0.5*(1e9-2)},
		{"empty curve", empty, 3, 1, 0, 3},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tt.c.At(tt.t); got != tt.surv {
				t.Errorf("At(%v) = %v, want %v", tt.t, got, tt.surv)
			}
			if got := tt.c.CDF(tt.t); got != 1-tt.surv {
				t.Errorf("CDF(%v) = %v, want %v", tt.t, got, 1-tt.surv)
			}
			if got := tt.c.AtRisk(tt.t); got != tt.atRisk {
				t.Errorf("AtRisk(%v) = %d, want %d", tt.t, got, tt.atRisk)
			}
			if got := tt.c.PointAt(tt.t); got.Surv != tt.surv || got.NRisk != tt.atRisk || got.Time != tt.t {
				t.Errorf("PointAt(%v) = %+v, want Surv %v, NRisk %d", tt.t, got, tt.surv, tt.atRisk)
			}
			if tt.t >= 0 {
				if got := tt.c.RestrictedMean(tt.t); !near(got, tt.restMean, 1e-12*max(1, tt.t)) {
					t.Errorf("RestrictedMean(%v) = %.15g, want %.15g", tt.t, got, tt.restMean)
				}
			}
		})
	}
	if got := tied.At(math.NaN()); !math.IsNaN(got) {
		t.Errorf("At(NaN) = %v, want NaN", got)
	}
}

// PointAt before the first event: S = 1 and G = 0, so the log and plain
// limits are both 1 and the log-log ones undefined (R prints NA).
func TestPointAtBeforeFirstEvent(t *testing.T) {
	c := mustCurve(t, []float64{1, 2, 4, 6}, []bool{true, true, false, false})
	tests := []struct {
		ct     ConfType
		lo, hi float64
	}{
		{ConfLog, 1, 1},
		{ConfLogLog, math.NaN(), math.NaN()},
		{ConfPlain, 1, 1},
	}
	for _, tt := range tests {
		t.Run(tt.ct.String(), func(t *testing.T) {
			p := c.WithConfidence(tt.ct, 0.95).PointAt(0.5)
			if p.Surv != 1 || p.StdErr != 0 || p.NRisk != 4 || !near(p.Lower, tt.lo, 0) || !near(p.Upper, tt.hi, 0) {
				t.Errorf("PointAt(0.5) = %+v, want Surv 1, StdErr 0, NRisk 4, limits %v, %v", p, tt.lo, tt.hi)
			}
		})
	}
}

// Intervals by hand on the "censored after the last event" case at t = 2:
// S = 1/2, G = 1/4 (√G = 1/2), SE(S) = 1/4.
//   - log: 0.5·exp(∓z/2), upper capped: 0.5·e^0.98 > 1.
//   - log-log: w = z·(1/2)/log(1/2) < 0; limits exp(−exp(log(log 2) ∓ w)),
//     i.e. 0.5^exp(−z/(2 log 2)) and 0.5^exp(z/(2 log 2)) after swapping.
//   - plain: 0.5 ∓ z/4 = 0.0100 and 0.98999.
//   - 90% log: z = qnorm(0.95) = 1.6448536269514715 (R 4.2.2).
func TestConfidenceHandWorked(t *testing.T) {
	c := mustCurve(t, []float64{1, 2, 4, 6}, []bool{true, true, false, false})
	k := z95 / (2 * math.Ln2)
	tests := []struct {
		name   string
		ct     ConfType
		level  float64
		lo, hi float64
	}{
		{"log", ConfLog, 0.95, 0.5 * math.Exp(-z95/2), 1},
		{"log-log", ConfLogLog, 0.95, math.Pow(0.5, math.Exp(k)), math.Pow(0.5, math.Exp(-k))},
		{"plain", ConfPlain, 0.95, 0.5 - z95/4, 0.5 + z95/4},
		{"log 90%", ConfLog, 0.90, 0.5 * math.Exp(-1.6448536269514715/2), 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			cc := c.WithConfidence(tt.ct, tt.level)
			if ct, lv := cc.Confidence(); ct != tt.ct || lv != tt.level {
				t.Errorf("Confidence() = %v, %v, want %v, %v", ct, lv, tt.ct, tt.level)
			}
			r := cc.Rows()[1]
			if !near(r.Lower, tt.lo, 1e-15) || !near(r.Upper, tt.hi, 1e-15) {
				t.Errorf("Rows()[1] limits = %.17g, %.17g, want %.17g, %.17g", r.Lower, r.Upper, tt.lo, tt.hi)
			}
		})
	}
	if ct, lv := c.Confidence(); ct != ConfLog || lv != 0.95 {
		t.Errorf("WithConfidence changed the original: Confidence() = %v, %v, want log, 0.95", ct, lv)
	}
}

// Quantiles by hand, including R's midpoint rule. Each value also came out
// of R 4.2.2, survival 3.5.3 quantile(survfit(…), probs = …), run for this
// package.
func TestQuantileHandWorked(t *testing.T) {
	four := mustCurve(t, []float64{1, 2, 3, 4}, []bool{true, true, true, true})
	open := mustCurve(t, []float64{1, 2, 4, 6}, []bool{true, true, false, false})
	tied := mustCurve(t, []float64{5, 2, 8, 3, 2, 5, 5}, []bool{true, true, false, true, false, false, true})
	zero := mustCurve(t, []float64{0, 0, 1}, []bool{true, false, true})
	censored := mustCurve(t, []float64{5, 3, 5}, []bool{false, false, false})
	single := mustCurve(t, []float64{4}, []bool{true})
	tests := []struct {
		name string
		c    *Curve
		p    float64
		want float64
		ok   bool
	}{
		// four: S = 3/4, 1/2, 1/4, 0 at 1, 2, 3, 4; every quantile sits on
		// a step, so each is the midpoint of that step and the next event.
		{"on a step: 25%", four, 0.25, 1.5, true},
		{"on a step: median", four, 0.5, 2.5, true},
		{"on a step: 75%", four, 0.75, 3.5, true},
		// S = 0 on the last step: midpoint of 4 and the largest time, 4.
		{"p = 1 at the end", four, 1, 4, true},
		{"p = 0", four, 0, 0, true},
		{"between steps", four, 0.3, 2, true},
		// open: S = 1/2 on the last step [2, ∞), largest observed time 6:
		// quantile.survfit gives (2 + 6)/2 = 4. (print.survfit shows 2
		// for this median; see Quantile's doc.)
		{"on the last step: median", open, 0.5, 4, true},
		{"below the last step", open, 0.4, 2, true},
		{"never reached", open, 0.75, 0, false},
		// tied: F = 1/7, 11/35, 23/35 at 2, 3, 5.
		{"tied: 25%", tied, 0.25, 3, true},
		{"tied: median", tied, 0.5, 5, true},
		{"tied: 75%", tied, 0.75, 0, false},
		// zero: F(0) = 1/3 already.
		{"event at 0: 25%", zero, 0.25, 0, true},
		{"event at 0: median", zero, 0.5, 1, true},
		{"all censored", censored, 0.5, 0, false},
		{"all censored, p = 0", censored, 0, 0, true},
		{"single event", single, 0.5, 4, true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, ok := tt.c.Quantile(tt.p)
			if got != tt.want || ok != tt.ok {
				t.Errorf("Quantile(%v) = %v, %v, want %v, %v", tt.p, got, ok, tt.want, tt.ok)
			}
			if tt.p == 0.5 {
				if m, mok := tt.c.Median(); m != got || mok != ok {
					t.Errorf("Median() = %v, %v, want %v, %v", m, mok, got, ok)
				}
			}
		})
	}
}

// The median's limits by hand, on (1 E) (2 E) (3 E) (4 E): S = 3/4, 1/2,
// 1/4, 0 and G = 1/12, 1/4, 3/4, ∞ at 1, 2, 3, 4.
//   - Log lower curve S·exp(−z√G) = 0.4259, 0.1877, 0.0458, undefined:
//     already below 1/2 at the first event, so the lower limit is 1.
//   - Log upper curve: 0.75·e^0.566, 0.5·e^0.980, 0.25·e^1.697 are all > 1,
//     capped at 1, and undefined at 4: it never reaches 1/2, so the upper
//     limit is not reached.
//
// R 4.2.2, survival 3.5.3 (run for this package) prints median 2.5,
// 0.95LCL 1, 0.95UCL NA.
func TestMedianCIHandWorked(t *testing.T) {
	four := mustCurve(t, []float64{1, 2, 3, 4}, []bool{true, true, true, true})
	lo, hi, loOK, hiOK := four.MedianCI()
	if lo != 1 || !loOK || hiOK {
		t.Errorf("MedianCI() = %v, %v, %v, %v, want 1, _, true, false", lo, hi, loOK, hiOK)
	}
}

// Bad data is an error wrapping ErrBadTime, from every constructor; the
// error names the episode.
func TestBadTimes(t *testing.T) {
	tests := []struct {
		name   string
		times  []float64
		events []bool
	}{
		{"negative", []float64{3, -1}, []bool{true, false}},
		{"NaN", []float64{math.NaN()}, []bool{true}},
		{"+Inf", []float64{1, math.Inf(1)}, []bool{true, false}},
		{"-Inf", []float64{math.Inf(-1)}, []bool{false}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c, err := KaplanMeier(tt.times, tt.events)
			if !errors.Is(err, ErrBadTime) || c != nil {
				t.Errorf("KaplanMeier(%v) = %v, %v, want nil, ErrBadTime", tt.times, c, err)
			}
		})
	}
	intTests := []struct {
		name string
		days []int64
	}{
		{"negative day", []int64{5, 0, -2}},
		{"beyond 2^53", []int64{1, 1<<53 + 1}},
	}
	for _, tt := range intTests {
		t.Run(tt.name, func(t *testing.T) {
			c, err := KaplanMeierDays(tt.days, make([]bool, len(tt.days)))
			if !errors.Is(err, ErrBadTime) || c != nil {
				t.Errorf("KaplanMeierDays(%v) = %v, %v, want nil, ErrBadTime", tt.days, c, err)
			}
		})
	}
	var b Builder
	for _, d := range []int{-1, MaxDays + 1} {
		if err := b.Add(d, true); !errors.Is(err, ErrBadTime) {
			t.Errorf("Builder.Add(%d) = %v, want ErrBadTime", d, err)
		}
	}
	if b.Len() != 0 {
		t.Errorf("Builder.Len() = %d after rejected episodes, want 0", b.Len())
	}
	if err := b.Add(MaxDays, false); err != nil {
		t.Errorf("Builder.Add(MaxDays) = %v, want nil", err)
	}
}

// Programming errors panic, as documented.
func TestPanics(t *testing.T) {
	c := mustCurve(t, []float64{1, 2}, []bool{true, false})
	tests := []struct {
		name string
		f    func()
	}{
		{"KaplanMeier length mismatch", func() { KaplanMeier([]float64{1, 2}, []bool{true}) }},
		{"KaplanMeierDays length mismatch", func() { KaplanMeierDays([]int{1}, nil) }},
		{"Quantile(-0.1)", func() { c.Quantile(-0.1) }},
		{"Quantile(1.1)", func() { c.Quantile(1.1) }},
		{"Quantile(NaN)", func() { c.Quantile(math.NaN()) }},
		{"QuantileCI(2)", func() { c.QuantileCI(2) }},
		{"FirstTimeCDFAtLeast(NaN)", func() { c.FirstTimeCDFAtLeast(math.NaN()) }},
		{"WithConfidence level 1", func() { c.WithConfidence(ConfLog, 1) }},
		{"WithConfidence level 0", func() { c.WithConfidence(ConfLog, 0) }},
		{"WithConfidence unknown type", func() { c.WithConfidence(ConfType(7), 0.95) }},
		{"RestrictedMean(-1)", func() { c.RestrictedMean(-1) }},
		{"PointAt(NaN)", func() { c.PointAt(math.NaN()) }},
		{"Builder.AddN negative count", func() { var b Builder; b.AddN(1, true, -1) }},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Errorf("%s did not panic", tt.name)
				}
			}()
			tt.f()
		})
	}
}

// FirstTimeCDFAtLeast by hand.
func TestFirstTimeCDFAtLeast(t *testing.T) {
	// ten: one event on each day 1…10, so F(t) = t/10 at the event times,
	// each computed as 1 − ∏(1 − 1/n) with rounding; F(9) = 0.9 must be
	// found at 9 although the product need not give exactly 0.1.
	ten := make([]float64, 10)
	for i := range ten {
		ten[i] = float64(i + 1)
	}
	tenC := mustCurve(t, ten, []bool{true, true, true, true, true, true, true, true, true, true})
	// open: F = 1/4 at 1, 1/2 from 2 on (censored at 4 and 6).
	open := mustCurve(t, []float64{1, 2, 4, 6}, []bool{true, true, false, false})
	tests := []struct {
		name  string
		c     *Curve
		level float64
		want  float64
		ok    bool
	}{
		{"exactly on a value", tenC, 0.9, 9, true},
		{"q·F(τ) with q = 0.9, τ = 10", tenC, 0.9 * tenC.CDF(10), 9, true},
		{"between values", tenC, 0.85, 9, true},
		{"first value", tenC, 0.1, 1, true},
		{"all", tenC, 1, 10, true},
		{"on a flat last step: no midpoint", open, 0.5, 2, true},
		{"q·F(τ), τ past the largest time", open, 0.9 * open.CDF(365), 2, true},
		{"above the curve's end", open, 0.6, 0, false},
		{"level 0", open, 0, 0, true},
		{"negative level", open, -1, 0, true},
		{"above 1", tenC, 1.5, 0, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, ok := tt.c.FirstTimeCDFAtLeast(tt.level)
			if got != tt.want || ok != tt.ok {
				t.Errorf("FirstTimeCDFAtLeast(%v) = %v, %v, want %v, %v", tt.level, got, ok, tt.want, tt.ok)
			}
		})
	}
}

// The three constructors agree exactly on random whole-day data with many
// ties, including KaplanMeierDays' sorting path for long times.
func TestConstructorsAgree(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	tests := []struct {
		name    string
		n       int
		maxDays int
	}{
		{"dense, heavy ties", 2000, 60},
		{"dense, few ties", 500, 1500},
		{"sparse: sorting path", 50, 200_000},
		{"one episode", 1, 3},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			days := make([]int, tt.n)
			times := make([]float64, tt.n)
			events := make([]bool, tt.n)
			var b Builder
			for i := range days {
				days[i] = rng.IntN(tt.maxDays + 1)
				times[i] = float64(days[i])
				events[i] = rng.Float64() < 0.6
				if err := b.Add(days[i], events[i]); err != nil {
					t.Fatal(err)
				}
			}
			want := mustCurve(t, times, events)
			byDays, err := KaplanMeierDays(days, events)
			if err != nil {
				t.Fatal(err)
			}
			for name, c := range map[string]*Curve{"KaplanMeierDays": byDays, "Builder": b.Curve()} {
				if !sameRows(c.Rows(), want.Rows()) {
					t.Errorf("%s: Rows() differ from KaplanMeier's", name)
				}
				if c.N() != want.N() || c.Events() != want.Events() || c.MaxTime() != want.MaxTime() {
					t.Errorf("%s: N, Events, MaxTime = %d, %d, %v, want %d, %d, %v",
						name, c.N(), c.Events(), c.MaxTime(), want.N(), want.Events(), want.MaxTime())
				}
				for _, q := range []float64{0.1, 0.5, 0.9} {
					g, gok := c.Quantile(q)
					w, wok := want.Quantile(q)
					if g != w || gok != wok {
						t.Errorf("%s: Quantile(%v) = %v, %v, want %v, %v", name, q, g, gok, w, wok)
					}
				}
			}
			// The table adds up: each row's NRisk − NEvent − NCensor is the
			// next row's NRisk, and the last row's is 0.
			rows := want.Rows()
			for i, r := range rows {
				next := 0
				if i+1 < len(rows) {
					next = rows[i+1].NRisk
				}
				if r.NRisk-r.NEvent-r.NCensor != next {
					t.Errorf("t=%v: NRisk − NEvent − NCensor = %d, want next NRisk %d", r.Time, r.NRisk-r.NEvent-r.NCensor, next)
				}
			}
		})
	}
}

// Builder: AddN equals repeated Add, a curve does not change with later
// Adds, and Reset starts afresh.
func TestBuilder(t *testing.T) {
	var one, many Builder
	for range 3 {
		if err := one.Add(4, true); err != nil {
			t.Fatal(err)
		}
	}
	if err := one.Add(9, false); err != nil {
		t.Fatal(err)
	}
	if err := many.AddN(4, true, 3); err != nil {
		t.Fatal(err)
	}
	if err := many.AddN(9, false, 1); err != nil {
		t.Fatal(err)
	}
	if err := many.AddN(2, true, 0); err != nil {
		t.Fatal(err)
	}
	c := many.Curve()
	if !sameRows(one.Curve().Rows(), c.Rows()) || one.Len() != 4 || many.Len() != 4 {
		t.Fatalf("AddN(4, true, 3) + AddN(9, false, 1) = %+v (Len %d), want %+v (Len %d)", c.Rows(), many.Len(), one.Curve().Rows(), one.Len())
	}
	// (4 E ×3) (9 C): S(4) = 1 − 3/4 = 1/4.
	if got := c.At(4); got != 0.25 {
		t.Errorf("At(4) = %v, want 0.25", got)
	}
	if err := many.Add(1, true); err != nil {
		t.Fatal(err)
	}
	if got := c.At(1); got != 1 {
		t.Errorf("At(1) of a curve built before Add(1) = %v, want 1", got)
	}
	many.Reset()
	if many.Len() != 0 || len(many.Curve().Rows()) != 0 || many.Curve().N() != 0 {
		t.Errorf("after Reset: Len() = %d, Rows() = %v, want empty", many.Len(), many.Curve().Rows())
	}
}

// sameRows reports whether two tables are identical, NaN matching NaN.
func sameRows(a, b []Row) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		x, y := a[i], b[i]
		if x.Time != y.Time || x.NRisk != y.NRisk || x.NEvent != y.NEvent || x.NCensor != y.NCensor ||
			!near(x.Surv, y.Surv, 0) || !near(x.StdErr, y.StdErr, 0) || !near(x.Lower, y.Lower, 0) || !near(x.Upper, y.Upper, 0) {
			return false
		}
	}
	return true
}

// Where R's two median-interval routines disagree, MedianCI follows
// print.survfit. On these 17 episodes the log upper curve first falls below
// 1/2 at 6 (0.493) and rises again at 8 (0.495). R 4.2.2, survival 3.5.3
// (run for this package): print(survfit(Surv(time, event) ~ 1)) shows
// median 3, 0.95LCL 2, 0.95UCL 6; quantile(fit, 0.5) gives upper 8, because
// its findq sorts the curve's values and takes the time of the smallest
// one at or past 1/2. The band first stops containing 1/2 at 6.
func TestMedianCIRisingUpperCurve(t *testing.T) {
	times := []float64{0, 0, 0, 1, 2, 2, 3, 3, 3, 3, 5, 5, 6, 6, 7, 8, 8}
	events := []bool{true, true, true, true, true, true, true, true, true, true, true, true, true, true, false, true, false}
	c := mustCurve(t, times, events)
	rows := c.Rows()
	// upper(6) = 0.1765·exp(1.96·√G(6)) and upper(8): R prints 0.493, 0.495.
	if u6, u8 := rows[5].Upper, rows[6].Upper; !(u6 < 0.5 && u8 > u6 && u8 < 0.5) {
		t.Fatalf("upper limits at 6 and 8 = %v, %v, want a rise below 1/2 (R: 0.493, 0.495)", u6, u8)
	}
	med, ok := c.Median()
	lo, hi, loOK, hiOK := c.MedianCI()
	if med != 3 || !ok || lo != 2 || hi != 6 || !loOK || !hiOK {
		t.Errorf("Median(), MedianCI() = %v, %v; %v, %v, %v, %v, want 3, true; 2, 6, true, true", med, ok, lo, hi, loOK, hiOK)
	}
}
