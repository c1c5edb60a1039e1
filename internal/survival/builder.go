package survival

import "fmt"

// MaxDays is the longest episode, in days, that a Builder accepts: about
// 2,870 years, far beyond any gap between two order days. It bounds the
// Builder's memory (two counters per day, 16 MiB at most).
const MaxDays = 1 << 20

// Builder accumulates episodes whose times are whole days and builds their
// Kaplan–Meier curve in O(episodes + longest time) without storing the
// episodes: it keeps one event and one censoring counter per day. It is
// meant for callers that stream millions of episodes (gaps between order
// days) and for bootstrap loops, which Reset and refill it.
//
// The zero value is an empty Builder ready to use. A Builder is not safe for
// concurrent use.
type Builder struct {
	events   []int // events[d]: episodes of d days that ended in the event
	censored []int // censored[d]: episodes censored at d days
	n        int
}

// Add records one episode of days whole days (0 ≤ days ≤ MaxDays) that
// ended in the event (event = true) or was censored at days. An episode out
// of that range is not recorded and the error wraps ErrBadTime.
func (b *Builder) Add(days int, event bool) error {
	return b.AddN(days, event, 1)
}

// AddN records count identical episodes, as Add does once; a bootstrap
// resample passes each episode with its multiplicity. count = 0 records
// nothing. AddN panics on a negative count (a programming error).
func (b *Builder) AddN(days int, event bool, count int) error {
	if count < 0 {
		panic(fmt.Sprintf("survival: Builder.AddN with count %d", count))
	}
	if days < 0 || days > MaxDays {
		return fmt.Errorf("kaplan-meier: episode of %d days (want 0 to %d): %w", days, MaxDays, ErrBadTime)
	}
	if days >= len(b.events) {
		size := max(2*len(b.events), days+1, 64)
		if size > MaxDays+1 {
			size = MaxDays + 1
		}
		b.events = grow(b.events, size)
		b.censored = grow(b.censored, size)
	}
	if event {
		b.events[days] += count
	} else {
		b.censored[days] += count
	}
	b.n += count
	return nil
}

func grow(s []int, size int) []int {
	out := make([]int, size)
	copy(out, s)
	return out
}

// Len returns the number of episodes recorded since the last Reset.
func (b *Builder) Len() int { return b.n }

// Reset forgets every episode and keeps the memory for reuse.
func (b *Builder) Reset() {
	clear(b.events)
	clear(b.censored)
	b.n = 0
}

// Curve returns the Kaplan–Meier curve of the episodes recorded so far. The
// Builder stays usable; later Adds do not change the returned curve.
func (b *Builder) Curve() *Curve {
	k := 0
	for d := range b.events {
		if b.events[d]+b.censored[d] > 0 {
			k++
		}
	}
	times := make([]float64, 0, k)
	ev := make([]int, 0, k)
	ce := make([]int, 0, k)
	for d := range b.events {
		if b.events[d]+b.censored[d] > 0 {
			times = append(times, float64(d))
			ev = append(ev, b.events[d])
			ce = append(ce, b.censored[d])
		}
	}
	return fromCounts(times, ev, ce)
}

// Integer is the set of integer types KaplanMeierDays accepts, so that day
// counts can be passed without conversion.
type Integer interface {
	~int | ~int8 | ~int16 | ~int32 | ~int64 | ~uint | ~uint8 | ~uint16 | ~uint32 | ~uint64
}

// KaplanMeierDays is KaplanMeier for whole-day times: days[i] is the
// length of episode i in days (≥ 0), events[i] whether it ended in the
// event. When the longest episode is at most MaxDays and not much longer
// than the number of episodes it counts per day, O(n + longest) (the usual
// case: millions of gaps of at most a few thousand days); otherwise it
// sorts, O(n log n). Both give the same curve.
//
// A negative time is an error wrapping ErrBadTime. It panics if the slices
// differ in length (a programming error).
func KaplanMeierDays[T Integer](days []T, events []bool) (*Curve, error) {
	if len(days) != len(events) {
		panic(fmt.Sprintf("survival: KaplanMeierDays with %d times and %d event flags", len(days), len(events)))
	}
	var longest uint64
	for i, d := range days {
		if d < 0 {
			return nil, fmt.Errorf("kaplan-meier: episode %d has time %d: %w", i, int64(d), ErrBadTime)
		}
		longest = max(longest, uint64(d))
	}
	if longest <= MaxDays && longest <= 4*uint64(len(days))+4096 {
		var b Builder
		b.events = make([]int, longest+1)
		b.censored = make([]int, longest+1)
		for i, d := range days {
			if events[i] {
				b.events[d]++
			} else {
				b.censored[d]++
			}
		}
		b.n = len(days)
		return b.Curve(), nil
	}
	times := make([]float64, len(days))
	for i, d := range days {
		if uint64(d) > 1<<53 {
			// A float64 holds every integer up to 2^53 exactly; beyond,
			// distinct times could merge. Not a day count in any case.
			return nil, fmt.Errorf("kaplan-meier: episode %d has time %d, too large to represent exactly: %w", i, uint64(d), ErrBadTime)
		}
		times[i] = float64(d)
	}
	return KaplanMeier(times, events)
}
