package web

import (
	"container/list"
	"sync"
)

// lru keeps the most recently used values of immutable things (a training
// run's report, a published list's summary or CSV), so a page view does not
// decode or rebuild them each time. It holds at most max entries.
type lru[K comparable, V any] struct {
	mu    sync.Mutex
	max   int
	order *list.List // front = most recent; elements hold entry[K, V]
	items map[K]*list.Element
}

type entry[K comparable, V any] struct {
	key K
	val V
}

func newLRU[K comparable, V any](max int) *lru[K, V] {
	return &lru[K, V]{max: max, order: list.New(), items: map[K]*list.Element{}}
}

func (c *lru[K, V]) get(k K) (V, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if e, ok := c.items[k]; ok {
		c.order.MoveToFront(e)
		return e.Value.(entry[K, V]).val, true
	}
	var zero V
	return zero, false
}

func (c *lru[K, V]) put(k K, v V) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if e, ok := c.items[k]; ok {
		e.Value = entry[K, V]{k, v}
		c.order.MoveToFront(e)
		return
	}
	c.items[k] = c.order.PushFront(entry[K, V]{k, v})
	for c.order.Len() > c.max {
		last := c.order.Back()
		c.order.Remove(last)
		delete(c.items, last.Value.(entry[K, V]).key)
	}
}
