package history

import (
	"context"
	"errors"
	"runtime"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"ebb/internal/civil"
)

// waitUntil yields until cond holds. The deadline only stops a broken
// implementation from hanging the test; nothing is asserted about time.
func waitUntil(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.After(10 * time.Second)
	for !cond() {
		select {
		case <-deadline:
			t.Fatalf("gave up waiting until %s", what)
		default:
			runtime.Gosched()
		}
	}
}

// tiny returns a small History: one customer with n order days.
func tiny(n int) *History {
	b := NewBuilder(1, n)
	for i := range n {
		b.Add(0, 19000+civil.Date(i), 0, false)
	}
	h, err := b.Build(19000)
	if err != nil {
		panic(err)
	}
	return h
}

func TestCacheSingleFlight(t *testing.T) {
	const gets = 8
	c := NewCache(4)
	want := tiny(3)
	var calls atomic.Int32
	release := make(chan struct{})
	load := func(ctx context.Context) (*History, error) {
		calls.Add(1)
		<-release
		return want, nil
	}
	var wg sync.WaitGroup
	got := make([]*History, gets)
	errs := make([]error, gets)
	for i := range gets {
		wg.Go(func() { got[i], errs[i] = c.Get(context.Background(), 42, load) })
	}
	// One Get loads and the other seven wait for it. A cache that loaded
	// per Get would run the loader again instead: stop waiting then too,
	// so that the assertion below reports it.
	waitUntil(t, "every Get joined the load", func() bool {
		return (calls.Load() == 1 && c.waiters(42) == gets-1) || calls.Load() > 1
	})
	close(release)
	wg.Wait()
	if n := calls.Load(); n != 1 {
		t.Errorf("the loader ran %d times for %d concurrent Gets, want 1", n, gets)
	}
	for i := range gets {
		if errs[i] != nil || got[i] != want {
			t.Errorf("Get %d = %p, %v; want the loaded history %p", i, got[i], errs[i], want)
		}
	}
	// Loaded now: a later Get is served without the loader.
	if h, err := c.Get(context.Background(), 42, load); h != want || err != nil || calls.Load() != 1 {
		t.Errorf("Get after the load = %p, %v with %d loads; want %p from the cache", h, err, calls.Load(), want)
	}
}

func TestCacheEviction(t *testing.T) {
	c := NewCache(2)
	loads := map[int64]int{}
	histories := map[int64]*History{1: tiny(1), 2: tiny(2), 3: tiny(3)}
	steps := []struct {
		name     string
		version  int64
		wantLoad bool
		wantLen  int
	}{
		{"first 1 loads", 1, true, 1},
		{"first 2 loads", 2, true, 2},
		{"1 again is a hit and becomes the most recent", 1, false, 2},
		{"3 loads and evicts 2, the least recently used", 3, true, 2},
		{"1 is still held", 1, false, 2},
		{"2 loads again and evicts 3", 2, true, 2},
		{"3 loads again and evicts 1", 3, true, 2},
		{"2 is still held", 2, false, 2},
	}
	for _, st := range steps {
		before := loads[st.version]
		h, err := c.Get(context.Background(), st.version, func(context.Context) (*History, error) {
			loads[st.version]++
			return histories[st.version], nil
		})
		if err != nil || h != histories[st.version] {
			t.Fatalf("%s: Get(%d) = %p, %v; want %p", st.name, st.version, h, err, histories[st.version])
		}
		if loaded := loads[st.version] > before; loaded != st.wantLoad {
			t.Errorf("%s: loader ran = %v, want %v", st.name, loaded, st.wantLoad)
		}
		if n := c.Len(); n != st.wantLen {
			t.Errorf("%s: Len() = %d, want %d", st.name, n, st.wantLen)
		}
	}
}

func TestCacheErrorsAreNotCached(t *testing.T) {
	errBoom := errors.New("boom")
	tests := []struct {
		name    string
		load    func(context.Context) (*History, error)
		wantErr string // in the error's text
	}{
		{"a loader error", func(context.Context) (*History, error) { return nil, errBoom }, "boom"},
		{"no history and no error", func(context.Context) (*History, error) { return nil, nil }, "returned no history"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := NewCache(2)
			h, err := c.Get(context.Background(), 7, tt.load)
			if err == nil || !strings.Contains(err.Error(), tt.wantErr) || h != nil {
				t.Fatalf("Get = %p, %v; want an error containing %q", h, err, tt.wantErr)
			}
			if c.Len() != 0 {
				t.Errorf("Len() after a failed load = %d, want 0", c.Len())
			}
			want := tiny(1)
			calls := 0
			h, err = c.Get(context.Background(), 7, func(context.Context) (*History, error) { calls++; return want, nil })
			if err != nil || h != want || calls != 1 {
				t.Errorf("Get after the failure = %p, %v with %d loads; want %p after 1 load", h, err, calls, want)
			}
		})
	}
	t.Run("waiters share the error", func(t *testing.T) {
		c := NewCache(2)
		release := make(chan struct{})
		var calls atomic.Int32
		load := func(context.Context) (*History, error) {
			calls.Add(1)
			<-release
			return nil, errBoom
		}
		errs := make(chan error, 2)
		for range 2 {
			go func() { _, err := c.Get(context.Background(), 7, load); errs <- err }()
		}
		waitUntil(t, "the second Get joined", func() bool {
			return (calls.Load() == 1 && c.waiters(7) == 1) || calls.Load() > 1
		})
		close(release)
		for range 2 {
			if err := <-errs; !errors.Is(err, errBoom) {
				t.Errorf("Get = %v, want boom", err)
			}
		}
		if calls.Load() != 1 {
			t.Errorf("loader ran %d times, want 1", calls.Load())
		}
	})
}

func TestCacheCancellation(t *testing.T) {
	t.Run("a waiter that gives up does not stop the load", func(t *testing.T) {
		c := NewCache(2)
		want := tiny(2)
		release := make(chan struct{})
		var calls atomic.Int32
		load := func(context.Context) (*History, error) { calls.Add(1); <-release; return want, nil }
		loaderDone := make(chan *History)
		go func() { h, _ := c.Get(context.Background(), 5, load); loaderDone <- h }()
		waitUntil(t, "the load started", func() bool { return calls.Load() == 1 })

		ctx, cancel := context.WithCancel(context.Background())
		waiterDone := make(chan error)
		go func() { _, err := c.Get(ctx, 5, load); waiterDone <- err }()
		waitUntil(t, "the waiter joined", func() bool { return c.waiters(5) == 1 })
		cancel()
		if err := <-waiterDone; !errors.Is(err, context.Canceled) {
			t.Errorf("cancelled waiter's Get = %v, want context.Canceled", err)
		}
		close(release)
		if h := <-loaderDone; h != want {
			t.Errorf("loader's Get = %p, want %p", h, want)
		}
		if calls.Load() != 1 || c.Len() != 1 {
			t.Errorf("%d loads, Len %d; want 1, 1", calls.Load(), c.Len())
		}
	})
	t.Run("a cancelled loader makes a live waiter load", func(t *testing.T) {
		c := NewCache(2)
		want := tiny(2)
		var calls atomic.Int32
		// The first load waits for its context to end; the second succeeds.
		load := func(ctx context.Context) (*History, error) {
			if calls.Add(1) == 1 {
				<-ctx.Done()
				return nil, ctx.Err()
			}
			return want, nil
		}
		ctx, cancel := context.WithCancel(context.Background())
		loaderDone := make(chan error)
		go func() { _, err := c.Get(ctx, 5, load); loaderDone <- err }()
		waitUntil(t, "the load started", func() bool { return calls.Load() == 1 })
		waiterDone := make(chan *History)
		go func() { h, _ := c.Get(context.Background(), 5, load); waiterDone <- h }()
		waitUntil(t, "the waiter joined", func() bool { return c.waiters(5) == 1 })
		cancel()
		if err := <-loaderDone; !errors.Is(err, context.Canceled) {
			t.Errorf("cancelled loader's Get = %v, want context.Canceled", err)
		}
		if h := <-waiterDone; h != want {
			t.Errorf("live waiter's Get = %p, want %p (its own load)", h, want)
		}
		if calls.Load() != 2 {
			t.Errorf("loader ran %d times, want 2", calls.Load())
		}
	})
	t.Run("a panicking loader fails its waiters", func(t *testing.T) {
		c := NewCache(2)
		release := make(chan struct{})
		var calls atomic.Int32
		load := func(context.Context) (*History, error) {
			calls.Add(1)
			<-release
			panic("loader bug")
		}
		recovered := make(chan any)
		go func() {
			defer func() { recovered <- recover() }()
			c.Get(context.Background(), 9, load)
		}()
		waitUntil(t, "the load started", func() bool { return calls.Load() == 1 })
		waiterDone := make(chan error)
		go func() { _, err := c.Get(context.Background(), 9, load); waiterDone <- err }()
		waitUntil(t, "the waiter joined", func() bool { return c.waiters(9) == 1 })
		close(release)
		if p := <-recovered; p != "loader bug" {
			t.Errorf("the loading Get panicked with %v, want the loader's panic", p)
		}
		if err := <-waiterDone; err == nil || !strings.Contains(err.Error(), "panicked") {
			t.Errorf("waiter's Get = %v, want a loader-panicked error", err)
		}
		if c.Len() != 0 {
			t.Errorf("Len() = %d after a panicked load, want 0", c.Len())
		}
	})
}
