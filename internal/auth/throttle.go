package auth

import (
	"strings"
	"sync"
	"time"
)

// Throttle limits failed sign-ins per account and per client address: after
// MaxPerAccount failures for one name (or MaxPerAddress from one address)
// within Window, further attempts are refused until Window has passed since
// the first of them. It lives in memory: a restart forgets it, which costs
// an attacker a restart of the server they are attacking.
type Throttle struct {
	MaxPerAccount int
	MaxPerAddress int
	Window        time.Duration
	Now           func() time.Time

	mu       sync.Mutex
	accounts map[string]*strikes
	addrs    map[string]*strikes
}

type strikes struct {
	n     int
	first time.Time
}

// NewThrottle returns a throttle with the usual limits: 5 failures per
// account and 20 per address in 15 minutes (common practice, cf. the limits
// NIST SP 800-63B section 5.2.2 allows: at most 100 consecutive failures).
func NewThrottle(now func() time.Time) *Throttle {
	return &Throttle{MaxPerAccount: 5, MaxPerAddress: 20, Window: 15 * time.Minute, Now: now,
		accounts: map[string]*strikes{}, addrs: map[string]*strikes{}}
}

// Blocked reports whether a sign-in for name from addr must be refused now,
// and for how long.
func (t *Throttle) Blocked(name, addr string) (time.Duration, bool) {
	t.mu.Lock()
	defer t.mu.Unlock()
	now := t.Now()
	wait := time.Duration(0)
	if s := t.current(t.accounts, strings.ToLower(name), now); s != nil && s.n >= t.MaxPerAccount {
		wait = max(wait, s.first.Add(t.Window).Sub(now))
	}
	if s := t.current(t.addrs, addr, now); s != nil && s.n >= t.MaxPerAddress {
		wait = max(wait, s.first.Add(t.Window).Sub(now))
	}
	return wait, wait > 0
}

// Fail records a failed sign-in.
func (t *Throttle) Fail(name, addr string) {
	t.mu.Lock()
	defer t.mu.Unlock()
	now := t.Now()
	for _, k := range []struct {
		m   map[string]*strikes
		key string
	}{{t.accounts, strings.ToLower(name)}, {t.addrs, addr}} {
		s := t.current(k.m, k.key, now)
		if s == nil {
			if len(k.m) > 100_000 {
				t.prune(k.m, now)
			}
			s = &strikes{first: now}
			k.m[k.key] = s
		}
		s.n++
	}
}

// Succeed clears the account's failures after a good sign-in.
func (t *Throttle) Succeed(name string) {
	t.mu.Lock()
	defer t.mu.Unlock()
	delete(t.accounts, strings.ToLower(name))
}

func (t *Throttle) current(m map[string]*strikes, key string, now time.Time) *strikes {
	s := m[key]
	if s != nil && now.Sub(s.first) >= t.Window {
		delete(m, key)
		return nil
	}
	return s
}

func (t *Throttle) prune(m map[string]*strikes, now time.Time) {
	for k, s := range m {
		if now.Sub(s.first) >= t.Window {
			delete(m, k)
		}
	}
}
