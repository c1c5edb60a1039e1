package jobs

import (
	"math"
	"sync"
)

// Progress is a running job's progress: a percentage and a short message.
// It is handed to the job's Func and read by the Runner. Its methods are
// safe from any goroutine; the zero value is ready to use, and a nil
// *Progress ignores Set, so a Func can also be called outside a Runner.
type Progress struct {
	mu  sync.Mutex
	pct float64
	msg string
	seq uint64 // counts changes, so the Runner writes only when something changed
}

// Set records that the job is pct percent done and is doing message. pct is
// clamped to [0, 100] and never goes backwards: a lower value (or NaN)
// keeps the current percentage. An empty message keeps the current one.
// Set is cheap (one uncontended lock); call it as often as is convenient.
func (p *Progress) Set(pct float64, message string) {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	changed := false
	if !math.IsNaN(pct) {
		pct = min(max(pct, 0), 100)
		if pct > p.pct {
			p.pct = pct
			changed = true
		}
	}
	if message != "" && message != p.msg {
		p.msg = message
		changed = true
	}
	if changed {
		p.seq++
	}
}

// Get returns the current percentage and message.
func (p *Progress) Get() (pct float64, message string) {
	if p == nil {
		return 0, ""
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.pct, p.msg
}

// snapshot returns the percentage, message and change count together.
func (p *Progress) snapshot() (pct float64, message string, seq uint64) {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.pct, p.msg, p.seq
}
