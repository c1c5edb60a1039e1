package jobs

import "time"

// SetTicks makes r write running jobs' progress on the ticks sent on ch
// instead of every PersistEvery, so a test decides when ticks happen. Call
// it before Start.
func (r *Runner) SetTicks(ch <-chan time.Time) {
	r.ticks = func(time.Duration) (<-chan time.Time, func()) { return ch, func() {} }
}
