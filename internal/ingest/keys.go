package ingest

import (
	"hash/maphash"
	"math"
	"strings"

	"ebb/internal/civil"
)

// Keys maps customer keys to dense ids 0, 1, 2, … in order of first sight.
// Analyses index arrays by these ids, so a key keeps its id for the life of
// the dataset.
type Keys struct {
	ids  map[string]int32
	keys []string
	// last remembers the previous lookup: exports sorted by customer repeat
	// a key on consecutive rows, and a string compare beats a map probe.
	last    string
	lastID  int32
	hasLast bool
}

// NewKeys starts from the keys already stored: existing[i] has id i.
func NewKeys(existing []string) *Keys {
	k := &Keys{ids: make(map[string]int32, len(existing)), keys: existing}
	for i, s := range existing {
		k.ids[s] = int32(i)
	}
	return k
}

// ID returns key's id, assigning the next one when key is new.
func (k *Keys) ID(key string) (id int32, isNew bool) {
	if k.hasLast && key == k.last {
		return k.lastID, false
	}
	id, ok := k.ids[key]
	if !ok {
		key = strings.Clone(key) // the record's backing string must not stay alive
		id = int32(len(k.keys))
		k.keys = append(k.keys, key)
		k.ids[key] = id
		isNew = true
	}
	k.last, k.lastID, k.hasLast = k.keys[id], id, true
	return id, isNew
}

// reserve sizes an empty key map for about n keys, so that it does not
// rehash every key several times while growing.
func (k *Keys) reserve(n int) {
	if len(k.ids) == 0 && n > 0 {
		k.ids = make(map[string]int32, n)
	}
}

// Lookup returns key's id without assigning one.
func (k *Keys) Lookup(key string) (int32, bool) {
	id, ok := k.ids[key]
	return id, ok
}

// Len returns the number of keys known.
func (k *Keys) Len() int { return len(k.keys) }

// Key returns the key with the given id.
func (k *Keys) Key(id int32) string { return k.keys[id] }

// Since returns the keys with ids ≥ from, in id order.
func (k *Keys) Since(from int) []string { return k.keys[from:] }

// RefSet remembers order references: those already stored, with their
// order, and those seen in the file, with their line.
//
// References are many (one per order) and mostly unique, so the set keys
// a map by a 64-bit hash and keeps the bytes in one arena: no allocation
// per reference, and a real comparison on every hash hit, so a hash
// collision can never pass for a duplicate.
type RefSet struct {
	seed     maphash.Seed
	index    map[uint64]int32 // hash → entry
	entries  []refEntry
	arena    []byte
	overflow map[string]int32 // references whose hash collided with another's
	stored   map[string]orderKey
}

type refEntry struct {
	off, n uint32
	line   int32
}

// NewRefSet returns an empty set.
func NewRefSet() *RefSet {
	return &RefSet{seed: maphash.MakeSeed(), index: map[uint64]int32{}, overflow: map[string]int32{}, stored: map[string]orderKey{}}
}

// reserve sizes an empty set for about n references.
func (s *RefSet) reserve(n int) {
	if len(s.entries) == 0 && n > 0 {
		s.index = make(map[uint64]int32, n)
		s.entries = make([]refEntry, 0, n)
		s.arena = make([]byte, 0, 10*n)
	}
}

// AddStored records a reference already stored in the dataset, with its
// order, so that a file repeating the same order can be recognised.
func (s *RefSet) AddStored(ref string, customer int32, day civil.Date, amount float64, hasAmount bool) {
	s.stored[ref] = keyOf(customer, day, amount, hasAmount)
}

// Len returns the number of references held.
func (s *RefSet) Len() int { return len(s.entries) + len(s.overflow) + len(s.stored) }

// storedAs reports whether ref is stored, and whether as the same order.
func (s *RefSet) storedAs(ref string, k orderKey) (stored, same bool) {
	got, ok := s.stored[ref]
	return ok, ok && got == k
}

// add records ref at line; if the file had ref before it returns that line
// and false.
func (s *RefSet) add(ref string, line int32) (prev int32, added bool) {
	h := maphash.String(s.seed, ref)
	i, hit := s.index[h]
	if !hit {
		if len(s.arena)+len(ref) > math.MaxUint32 {
			// Past 4 GB of references: fall back to the plain map.
			return s.addOverflow(ref, line)
		}
		s.index[h] = int32(len(s.entries))
		s.entries = append(s.entries, refEntry{off: uint32(len(s.arena)), n: uint32(len(ref)), line: line})
		s.arena = append(s.arena, ref...)
		return 0, true
	}
	e := s.entries[i]
	if string(s.arena[e.off:e.off+e.n]) == ref {
		return e.line, false
	}
	return s.addOverflow(ref, line)
}

func (s *RefSet) addOverflow(ref string, line int32) (int32, bool) {
	if prev, ok := s.overflow[ref]; ok {
		return prev, false
	}
	s.overflow[strings.Clone(ref)] = line
	return 0, true
}

// OrderSet is a multiset of stored orders, keyed by customer, day and
// amount, used to recognise rows of an append that are already stored when
// the file has no order references.
type OrderSet struct {
	n map[orderKey]int32
}

type orderKey struct {
	customer int32
	day      civil.Date
	cents    int64
}

// NoAmount marks an order without an amount in OrderSet keys.
const noAmount = math.MinInt64

// NewOrderSet returns an empty multiset.
func NewOrderSet() *OrderSet { return &OrderSet{n: map[orderKey]int32{}} }

// Add records one stored order; hasAmount false means the amount is absent.
func (s *OrderSet) Add(customer int32, day civil.Date, amount float64, hasAmount bool) {
	s.n[keyOf(customer, day, amount, hasAmount)]++
}

// take removes one matching order and reports whether there was one.
func (s *OrderSet) take(customer int32, day civil.Date, amount float64, hasAmount bool) bool {
	k := keyOf(customer, day, amount, hasAmount)
	if s.n[k] == 0 {
		return false
	}
	s.n[k]--
	return true
}

func keyOf(customer int32, day civil.Date, amount float64, hasAmount bool) orderKey {
	c := int64(noAmount)
	if hasAmount {
		c = int64(math.Round(amount * 100))
	}
	return orderKey{customer, day, c}
}
