// Package history holds a dataset version's orders in memory, in the
// columnar form every analysis reads: churn-window derivation, snapshot
// features, BG/NBD and scoring all walk the same History, loaded once per
// dataset version and shared through a Cache.
//
// # Order days
//
// Orders of one customer on the same calendar day form one order day, with
// their amounts summed (DESIGN.md §1): a split basket is not a "0-day
// gap". History stores order days only; Orders still reports how many raw
// orders went in.
//
// # Layout
//
// Customers are indexed by their dense id 0…n−1 (the store assigns them);
// their keys stay in the store, since no analysis needs them until a list
// is exported. The order days of all customers sit in one slice, customer
// by customer, and a slice of offsets says where each customer's run
// starts (compressed sparse row, "CSR"):
//
//	start   []int32      len customers+1; customer c owns [start[c], start[c+1])
//	days    []civil.Date ascending and distinct within each customer's run
//	amounts []float32    parallel to days; nil when the dataset has no amounts
//
// A customer with no orders (one listed only in a customers file) has an
// empty run.
//
// Why this shape rather than a slice of per-customer structs or a map:
// memory per order. A []civil.Date per customer costs a 24-byte slice
// header and a separate allocation for every customer; a map costs far
// more; a row-oriented []struct{customer, day, amount} costs 16 bytes an
// order and keeps customers apart. The CSR layout costs 4 bytes per
// customer plus 4 bytes per order day (8 with amounts), in three
// allocations the garbage collector never has to scan (no pointers). At
// 1M orders of 200k customers that is about 8.8 bytes per order, 9 MB in
// all; at 10M orders about 90 MB. Amounts are float32 — about seven
// significant digits, a cent on 100,000 — because they feed spend features
// and means, never accounting; they are summed in float64 before rounding.
//
// Queries as of a date t need each customer's days up to t: they binary
// search the customer's run (LastOnOrBefore, CountThrough, CountIn,
// AmountIn), allocate nothing and never look past t unless asked to, so a
// feature at t cannot read an order after t by accident.
//
// # Building
//
// The store streams orders version by version, in rowid order, not by
// customer. Builder collects raw rows (16 bytes each), then groups them by
// customer with a counting sort (ids are dense, so one pass counts and one
// pass scatters — no comparison sort of all rows), sorts each customer's
// few days (insertion sort; an already-sorted run costs one comparison a
// day) and merges same-day orders in place. Peak memory while building is
// about 28 bytes per raw row on top of the result.
//
// # Sharing
//
// A History is read-only after Build and safe for any number of concurrent
// readers. Cache keeps the most recently used histories by version id and
// loads each at most once at a time however many jobs ask for it.
package history
