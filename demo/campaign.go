package demo

import (
	"fmt"
	"io"
	"math/rand/v2"
	"slices"
	"time"
)

// WinBackRate is the demo's simulated campaign effect: a contacted customer
// places one extra order, with this probability, on a day drawn uniformly
// from the horizon after the list date. Otherwise contact changes nothing:
// a customer who had left still leaves, and one who would have ordered
// anyway still does. So among customers contacted once who would not have
// reordered, about this share now do; a customer on several weekly lists
// is contacted, and drawn, several times.
const WinBackRate = 0.1

// Treat applies the simulated campaign effect of a list dated listDate to
// the contacted customers (by key) and returns the extra orders, sorted by
// date, never after the business's End. Each list draws from its own
// stream (seed and list date), so the result does not depend on the order
// lists are treated in; order IDs are "LR-W" + list date + a number.
func (b Business) Treat(contacted []string, listDate time.Time, horizonDays int, seed uint64) []Order {
	rng := rand.New(rand.NewPCG(seed^pcgStream, uint64(listDate.Unix())))
	keys := slices.Clone(contacted)
	slices.Sort(keys)
	basket := map[string]float64{}
	for _, o := range b.Orders {
		basket[o.CustomerKey] = o.Amount // the customer's latest amount sets the extra order's size
	}
	var out []Order
	for _, k := range keys {
		if rng.Float64() >= WinBackRate {
			continue
		}
		day := listDate.AddDate(0, 0, 1+rng.IntN(horizonDays))
		if day.After(b.End) {
			continue
		}
		out = append(out, Order{CustomerKey: k, Date: day, Amount: basket[k],
			ID: fmt.Sprintf("LR-W%s-%04d", listDate.Format("20060102"), len(out)+1)})
	}
	slices.SortStableFunc(out, func(a, c Order) int { return a.Date.Compare(c.Date) })
	return out
}

// WriteOrderList writes orders in the layout of orders.csv.
func WriteOrderList(w io.Writer, orders []Order) error {
	return Business{Orders: orders}.WriteOrders(w)
}
