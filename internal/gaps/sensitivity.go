package gaps

import (
	"ebb/internal/civil"
	"ebb/internal/history"
)

// MaxX is the largest X the sensitivity table covers.
const MaxX = 365

// Group names the customers a sensitivity figure is about.
type Group int

const (
	All       Group = iota
	FirstTime       // for "lapsed today": customers with one order day; for lapse episodes: lapses after a customer's first order day
	Repeat          // two or more order days
	groups
)

func (g Group) String() string {
	return [...]string{"all", "first-time", "repeat"}[g]
}

// Cell is one group's figures for one X.
type Cell struct {
	// Customers with an order day in the look-back, and those of them with
	// recency ≥ X at data_through (lapsed today).
	Active, Lapsed int
	// Lapse episodes counted (lapse point + W ≤ data_through) and those
	// followed by an order within W days of the lapse point.
	Episodes, Returned int
	// MedianExtraWait is the median of (next order day − lapse point) over
	// the returners, in days; 0 when there are none.
	MedianExtraWait float64
}

// LapsedShare is Lapsed / Active (0 when no customer is active).
func (c Cell) LapsedShare() float64 { return ratio(c.Lapsed, c.Active) }

// ReturnShare is Returned / Episodes (0 when no episode is counted).
func (c Cell) ReturnShare() float64 { return ratio(c.Returned, c.Episodes) }

func ratio(a, b int) float64 {
	if b == 0 {
		return 0
	}
	return float64(a) / float64(b)
}

// Row is the sensitivity of one X.
type Row struct {
	Days  int
	Cells [groups]Cell // by Group
}

// Sensitivity computes the table for X = 1 … MaxX:
//
//   - lapsed today: of customers with an order day in the look-back, the
//     share whose recency at data_through is at least X;
//   - return after lapse: a lapse episode starts when a customer reaches X
//     silent days (at an order day d plus X, when the next order day comes
//     later than d + X, or never); it counts only when d + X + W ≤
//     data_through, and it is a return when the next order day is at most
//     d + X + W; the extra wait of a returner is next − (d + X).
//
// Every gap of the whole history is a possible lapse, so the cost is
// O(gaps + MaxX·W): each gap is binned once by its length and by the last X
// at which it still counts, and each X reads the bins.
func Sensitivity(h *history.History, lookbackDays, followUpDays int) []Row {
	cells := accumulate(h, lookbackDays, followUpDays, int(groups),
		func(c, n int) int {
			if n == 1 {
				return int(FirstTime)
			}
			return int(Repeat)
		},
		func(c, i int) int {
			if i == 0 {
				return int(FirstTime)
			}
			return int(Repeat)
		})
	rows := make([]Row, MaxX)
	for x := range rows {
		rows[x].Days = x + 1
		copy(rows[x].Cells[:], cells[x])
	}
	return rows
}

// SensitivityBy is the same table split by a customer attribute: level[c]
// is customer c's level (0 … levels−1; −1 for none, counted in the whole
// only). cells[x−1][0] is every customer, cells[x−1][1+l] level l.
func SensitivityBy(h *history.History, lookbackDays, followUpDays int, level []int32, levels int) [][]Cell {
	g := func(c int) int {
		if c < len(level) && level[c] >= 0 {
			return 1 + int(level[c])
		}
		return -1
	}
	return accumulate(h, lookbackDays, followUpDays, 1+levels,
		func(c, n int) int { return g(c) }, func(c, i int) int { return g(c) })
}

// accumulate computes the cells of every X for ng groups. Group 0 is every
// customer; customerGroup (of a customer with n order days) and lapseGroup
// (of the lapse after a customer's i-th order day) name one more group
// each, or −1 for none.
func accumulate(h *history.History, lookbackDays, followUpDays, ng int, customerGroup func(c, n int) int, lapseGroup func(c, i int) int) [][]Cell {
	if lookbackDays <= 0 {
		lookbackDays = 365
	}
	if followUpDays <= 0 {
		followUpDays = 365
	}
	W := followUpDays
	through := h.DataThrough()
	from := through - civil.Date(lookbackDays)

	// Lapsed today: histogram of recency (capped at MaxX+1) per group.
	recency := make([][]int, ng)
	for g := range recency {
		recency[g] = make([]int, MaxX+2)
	}
	// Lapse episodes: bins[g][len][m] counts gaps of length len (capped at
	// bigLen, and bigLen for open gaps) whose last countable X is m
	// (capped at MaxX; m < 1 never counts).
	bigLen := MaxX + W + 1
	bins := make([][][]int32, ng)
	for g := range bins {
		bins[g] = make([][]int32, bigLen+1)
	}
	add := func(g, length, m int) {
		if g < 0 || m < 1 {
			return
		}
		m = min(m, MaxX)
		length = min(length, bigLen)
		if bins[g][length] == nil {
			bins[g][length] = make([]int32, MaxX+1)
		}
		bins[g][length][m]++
	}

	for c := 0; c < h.Customers(); c++ {
		days := h.Days(c)
		// Only days up to data_through exist for this table.
		n := len(days)
		for n > 0 && days[n-1] > through {
			n--
		}
		days = days[:n]
		if n == 0 {
			continue
		}
		if days[n-1] > from {
			r := min(int(through-days[n-1]), MaxX+1)
			recency[0][r]++
			if g := customerGroup(c, n); g > 0 {
				recency[g][r]++
			}
		}
		for i, d := range days {
			length := bigLen // open: no next order day
			if i+1 < n {
				length = int(days[i+1] - d)
			}
			m := int(through-d) - W // counts while d + X + W ≤ through
			add(0, length, m)
			if g := lapseGroup(c, i); g > 0 {
				add(g, length, m)
			}
		}
	}

	cells := make([][]Cell, MaxX)
	for x := range cells {
		cells[x] = make([]Cell, ng)
	}
	waits := make([]int, W+1)
	for g := 0; g < ng; g++ {
		active := 0
		for _, k := range recency[g] {
			active += k
		}
		atLeast := active
		for x := 1; x <= MaxX; x++ {
			atLeast -= recency[g][x-1]
			cells[x-1][g].Active = active
			cells[x-1][g].Lapsed = atLeast
		}
		// suffix[len][X] = gaps of that length still counting at X.
		suffix := make([][]int32, bigLen+1)
		for length, b := range bins[g] {
			if b == nil {
				continue
			}
			s := make([]int32, MaxX+2)
			for m := MaxX; m >= 1; m-- {
				s[m] = s[m+1] + b[m]
			}
			suffix[length] = s
		}
		for x := 1; x <= MaxX; x++ {
			cell := &cells[x-1][g]
			clear(waits)
			for length := x + 1; length <= bigLen; length++ { // lapsed: the gap is longer than X
				s := suffix[length]
				if s == nil {
					continue
				}
				k := int(s[x])
				cell.Episodes += k
				if wait := length - x; length < bigLen && wait <= W {
					cell.Returned += k
					waits[wait] += k
				}
			}
			cell.MedianExtraWait = medianOfCounts(waits, cell.Returned)
		}
	}
	return cells
}

// medianOfCounts is the median (Hyndman & Fan definition 7, so the mean of
// the two middle values for an even count) of a multiset given as counts
// per value.
func medianOfCounts(counts []int, n int) float64 {
	if n == 0 {
		return 0
	}
	// 0-based positions of the middle element(s).
	lo, hi := (n-1)/2, n/2
	var vlo, vhi float64
	seen := 0
	for v, k := range counts {
		if k == 0 {
			continue
		}
		if seen <= lo && lo < seen+k {
			vlo = float64(v)
		}
		if seen <= hi && hi < seen+k {
			vhi = float64(v)
			break
		}
		seen += k
	}
	return (vlo + vhi) / 2
}
