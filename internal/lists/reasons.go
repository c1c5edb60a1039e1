package lists

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"ebb/internal/frame"
)

// Reason is one fact behind a customer's score.
type Reason struct {
	// Family is the feature family: recency, frequency, tenure, spend,
	// bgnbd, or the name of a feature that belongs to none of them.
	Family string
	// Weight is the summed contribution of the family's features in
	// log-odds; positive pushes toward "no reorder within H".
	Weight float64
	// Text is the fact in plain words, built from the customer's values.
	Text string
}

// The feature families. Features that describe the same fact are one
// family, so three reasons are three different facts.
const (
	famRecency   = "recency"
	famFrequency = "frequency"
	famTenure    = "tenure"
	famSpend     = "spend"
	famBGNBD     = "bgnbd"
)

// family returns the family of feature name. A missing-value indicator
// (name + frame.MissingSuffix) belongs to its feature's family; a feature
// outside the known families is a family of its own.
func family(name string) string {
	base := strings.TrimSuffix(name, frame.MissingSuffix)
	switch base {
	case "recency_days", "recency_over_gap", "mean_gap_days", "last_gap_days":
		return famRecency
	case "order_days_30", "order_days_90", "order_days_180", "order_days_365", "order_days_total", "order_trend":
		return famFrequency
	case "tenure_days":
		return famTenure
	case "spend_180", "mean_order_value":
		return famSpend
	case "p_active_bgnbd":
		return famBGNBD
	}
	return base
}

// Reasons returns up to limit reasons for one customer's score. names,
// values and contrib are parallel: each feature's name, the customer's
// value (NaN when missing) and its contribution to the raw score in
// log-odds. Contributions are summed per family; the direction is the sign
// of the total, and only families pushing that way are kept (a family
// summing to exactly 0 never is), largest |sum| first, ties by family name.
// So for a customer scored above the base rate every reason raises the
// risk, and below it every reason lowers it. A total of 0 (or NaN) gives
// no reasons. It panics if the three slices differ in length.
func Reasons(names []string, values []float64, contrib []float64, limit int) []Reason {
	if len(values) != len(names) || len(contrib) != len(names) {
		panic(fmt.Sprintf("lists.Reasons: %d names, %d values, %d contributions", len(names), len(values), len(contrib)))
	}
	if limit <= 0 {
		return nil
	}
	type sum struct {
		family string
		weight float64
	}
	sums := make([]sum, 0, 8)
	var total float64
	for j, name := range names {
		total += contrib[j]
		f := family(name)
		k := slices.IndexFunc(sums, func(s sum) bool { return s.family == f })
		if k < 0 {
			k = len(sums)
			sums = append(sums, sum{family: f})
		}
		sums[k].weight += contrib[j]
	}
	if total == 0 || math.IsNaN(total) {
		return nil
	}
	sums = slices.DeleteFunc(sums, func(s sum) bool {
		return !(s.weight > 0 && total > 0 || s.weight < 0 && total < 0)
	})
	slices.SortFunc(sums, func(a, b sum) int {
		if c := cmp.Compare(math.Abs(b.weight), math.Abs(a.weight)); c != 0 {
			return c
		}
		return cmp.Compare(a.family, b.family)
	})
	sums = sums[:min(limit, len(sums))]
	v := facts{names, values}
	out := make([]Reason, len(sums))
	for i, s := range sums {
		out[i] = Reason{Family: s.family, Weight: s.weight, Text: v.text(s.family)}
	}
	return out
}

// JoinReasons joins the reasons' texts with "; ", the form of the reasons
// column in exports. A reason's own text never holds a semicolon.
func JoinReasons(rs []Reason) string {
	switch len(rs) {
	case 0:
		return ""
	case 1:
		return rs[0].Text
	}
	n := 2 * (len(rs) - 1)
	for _, r := range rs {
		n += len(r.Text)
	}
	var b strings.Builder
	b.Grow(n)
	for i, r := range rs {
		if i > 0 {
			b.WriteString("; ")
		}
		b.WriteString(r.Text)
	}
	return b.String()
}

// facts looks up one customer's feature values by name.
type facts struct {
	names  []string
	values []float64
}

// get returns the value of feature name, NaN when missing or absent.
func (v facts) get(name string) float64 {
	if j := slices.Index(v.names, name); j >= 0 {
		return v.values[j]
	}
	return math.NaN()
}

// text words family f as a fact about the customer. When the values a
// family's sentence needs are missing it names the topic instead.
func (v facts) text(f string) string {
	switch f {
	case famRecency:
		return v.recency()
	case famFrequency:
		return v.frequency()
	case famTenure:
		return v.tenure()
	case famSpend:
		return v.spend()
	case famBGNBD:
		p := v.get("p_active_bgnbd")
		if !known(p) {
			return "purchase pattern (BG/NBD)"
		}
		return "purchase pattern gives a " + percent(p) + " chance of still being active (BG/NBD)"
	}
	return v.other(f)
}

func (v facts) recency() string {
	r, g := v.get("recency_days"), v.get("mean_gap_days")
	switch {
	case known(r) && v.get("order_days_total") == 1:
		return "ordered once, " + ago(r)
	case known(r) && known(g):
		return silence(r) + ", usually orders " + every(g)
	case known(r):
		return silence(r)
	case known(g):
		return "usually orders " + every(g)
	}
	return "time since the last order"
}

func (v facts) frequency() string {
	d180, trend := v.get("order_days_180"), v.get("order_trend")
	if known(d180) && known(trend) {
		s := orderDays(d180) + " in the last 6 months"
		switch n := whole(trend); {
		case n < 0:
			return s + ", " + strconv.Itoa(-n) + " fewer than in the 6 months before"
		case n > 0:
			return s + ", " + strconv.Itoa(n) + " more than in the 6 months before"
		}
		return s + ", the same as in the 6 months before"
	}
	for _, w := range []struct{ name, span string }{
		{"order_days_180", " in the last 6 months"},
		{"order_days_365", " in the last year"},
		{"order_days_90", " in the last 3 months"},
		{"order_days_30", " in the last 30 days"},
		{"order_days_total", " in all"},
	} {
		if n := v.get(w.name); known(n) {
			return orderDays(n) + w.span
		}
	}
	return "how often they order"
}

func (v facts) tenure() string {
	t := v.get("tenure_days")
	if !known(t) {
		return "how long they have been a customer"
	}
	const daysPerMonth = 365.25 / 12
	months := int(t / daysPerMonth)
	switch {
	case months < 2:
		return "first order " + ago(t)
	case months < 24:
		return "customer for " + strconv.Itoa(months) + " months"
	}
	return "customer for " + strconv.Itoa(int(t/365.25)) + " years"
}

func (v facts) spend() string {
	s, m := v.get("spend_180"), v.get("mean_order_value")
	spent := func() string {
		if s == 0 {
			return "spent nothing in the last 6 months"
		}
		return "spent " + money(s) + " in the last 6 months"
	}
	switch {
	case known(s) && known(m):
		return spent() + ", average order " + money(m)
	case known(m):
		return "average order " + money(m)
	case known(s) && s != 0:
		return spent()
	}
	// spend_180 is 0 and mean_order_value missing without amounts.
	return "no order amounts on record"
}

// other words a feature outside the known families: an attribute level
// column "attr=level" as "attr is level", anything else as "name: value".
func (v facts) other(name string) string {
	x := v.get(name)
	if attr, level, ok := strings.Cut(name, "="); ok {
		switch x {
		case 1:
			return attr + " is " + level
		case 0:
			return attr + " is not " + level
		}
		return attr + " unknown"
	}
	if !known(x) {
		return name + ": missing"
	}
	if x == math.Trunc(x) && math.Abs(x) < 1e15 {
		return name + ": " + strconv.FormatFloat(x, 'f', 0, 64)
	}
	return name + ": " + strconv.FormatFloat(x, 'f', 2, 64)
}

func known(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// whole rounds a count or a number of days to an int.
func whole(x float64) int { return int(math.Round(x)) }

// ago says how long before the list date something happened: "today",
// "1 day ago", "74 days ago".
func ago(days float64) string {
	switch n := whole(days); n {
	case 0:
		return "today"
	case 1:
		return "1 day ago"
	default:
		return strconv.Itoa(n) + " days ago"
	}
}

// silence words the recency: "last order today", "no order for 74 days".
func silence(days float64) string {
	switch n := whole(days); n {
	case 0:
		return "last order today"
	case 1:
		return "no order for 1 day"
	default:
		return "no order for " + strconv.Itoa(n) + " days"
	}
}

// every words a mean gap: "every day", "every 30 days".
func every(gap float64) string {
	if n := whole(gap); n > 1 {
		return "every " + strconv.Itoa(n) + " days"
	}
	return "every day"
}

// orderDays words a count of order days: "no order days", "1 order day",
// "3 order days".
func orderDays(x float64) string {
	switch n := whole(x); n {
	case 0:
		return "no order days"
	case 1:
		return "1 order day"
	default:
		return strconv.Itoa(n) + " order days"
	}
}

// money prints an amount with two decimals and no currency (ebb does not
// know it).
func money(x float64) string { return strconv.FormatFloat(x, 'f', 2, 64) }

// percent prints a probability as a whole percentage, never rounding a
// possible event to 0% or an uncertain one to 100%.
func percent(p float64) string {
	n := whole(p * 100)
	switch {
	case n == 0 && p > 0:
		return "less than 1%"
	case n == 100 && p < 1:
		return "more than 99%"
	}
	return strconv.Itoa(n) + "%"
}
