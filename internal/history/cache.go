package history

import (
	"container/list"
	"context"
	"errors"
	"fmt"
	"sync"
)

// Cache holds the histories of the most recently used dataset versions,
// keyed by version id, for every analysis job to share: a version's orders
// never change once it is ready, so one loaded copy serves all of them.
// Its methods are safe for concurrent use.
//
// Loading is single-flight: while one Get loads a version, other Gets for
// it wait for that load instead of starting their own. A failed load is
// not kept; the next Get tries again.
type Cache struct {
	mu      sync.Mutex
	max     int
	entries map[int64]*entry
	lru     list.List // of *entry, most recently used first; loading ones too
}

// entry is one version's history, loaded or loading.
type entry struct {
	version int64
	done    chan struct{} // closed once h or err is set
	loaded  bool          // done is closed; guarded by Cache.mu
	waiting int           // Gets waiting for the load; guarded by Cache.mu
	h       *History
	err     error
	elem    *list.Element // in Cache.lru; nil once removed; guarded by Cache.mu
}

// NewCache returns a Cache holding at most n histories (n below 1 is taken
// as 1). Only loaded histories are evicted, least recently used
// first; while more than max loads are running at once, the cache holds
// them all until they finish. An evicted History stays valid for whoever
// still holds it.
func NewCache(n int) *Cache {
	return &Cache{max: max(n, 1), entries: map[int64]*entry{}}
}

// Get returns the history of version, calling load to read it when the
// cache has none and no other Get is loading it. load runs with the
// context of the Get that started it, and must return a History or an
// error.
//
// A Get waiting for another's load returns ctx.Err() when its own context
// ends first; the load goes on for the others. When the load fails because
// the loading Get's context ended, a waiter whose context is still alive
// loads the version itself rather than return someone else's cancellation.
func (c *Cache) Get(ctx context.Context, version int64, load func(ctx context.Context) (*History, error)) (*History, error) {
	for {
		c.mu.Lock()
		e, ok := c.entries[version]
		if !ok {
			e = &entry{version: version, done: make(chan struct{})}
			c.entries[version] = e
			e.elem = c.lru.PushFront(e)
			c.evict()
			c.mu.Unlock()
			c.fill(ctx, e, load)
			return e.h, e.err
		}
		c.lru.MoveToFront(e.elem)
		loaded := e.loaded
		c.mu.Unlock()
		if !loaded && !c.wait(ctx, e) {
			return nil, ctx.Err()
		}
		if e.err == nil {
			return e.h, nil
		}
		if isContextError(e.err) && ctx.Err() == nil {
			continue // the loader's job was cancelled, not ours: load again
		}
		return nil, e.err
	}
}

// wait waits for e's load to finish and reports whether it did before ctx
// ended.
func (c *Cache) wait(ctx context.Context, e *entry) bool {
	c.mu.Lock()
	e.waiting++
	c.mu.Unlock()
	defer func() {
		c.mu.Lock()
		e.waiting--
		c.mu.Unlock()
	}()
	select {
	case <-e.done:
		return true
	case <-ctx.Done():
		return false
	}
}

// waiters returns the number of Gets waiting for version's load (0 when it
// is not loading): tests use it to know that every Get has joined.
func (c *Cache) waiters(version int64) int {
	c.mu.Lock()
	defer c.mu.Unlock()
	if e, ok := c.entries[version]; ok {
		return e.waiting
	}
	return 0
}

// fill runs load for e and publishes its result to e's waiters. When load
// panics the waiters get an error and the panic goes on up the loader's
// goroutine.
func (c *Cache) fill(ctx context.Context, e *entry, load func(ctx context.Context) (*History, error)) {
	returned := false
	defer func() {
		if !returned {
			e.h, e.err = nil, fmt.Errorf("load history of version %d: the loader panicked", e.version)
		}
		c.finish(e)
	}()
	e.h, e.err = load(ctx)
	returned = true
	if e.err == nil && e.h == nil {
		e.err = fmt.Errorf("load history of version %d: the loader returned no history", e.version)
	}
	if e.err != nil {
		e.h = nil
	}
}

// finish records e as loaded (or forgets it when the load failed), evicts
// what no longer fits and wakes e's waiters.
func (c *Cache) finish(e *entry) {
	c.mu.Lock()
	e.loaded = true
	if e.err != nil {
		c.remove(e)
	} else {
		c.evict()
	}
	c.mu.Unlock()
	close(e.done)
}

// evict removes loaded entries, least recently used first, until at most
// max remain or only loading ones are left over. c.mu must be held.
func (c *Cache) evict() {
	for el := c.lru.Back(); el != nil && c.lru.Len() > c.max; {
		prev := el.Prev()
		if e := el.Value.(*entry); e.loaded {
			c.remove(e)
		}
		el = prev
	}
}

// remove drops e from the map and the LRU list. c.mu must be held.
func (c *Cache) remove(e *entry) {
	if c.entries[e.version] == e {
		delete(c.entries, e.version)
	}
	if e.elem != nil {
		c.lru.Remove(e.elem)
		e.elem = nil
	}
}

// Len returns the number of histories held, loading ones included.
func (c *Cache) Len() int {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.lru.Len()
}

func isContextError(err error) bool {
	return errors.Is(err, context.Canceled) || errors.Is(err, context.DeadlineExceeded)
}
