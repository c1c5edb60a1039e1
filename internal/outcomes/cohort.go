package outcomes

import (
	"fmt"
	"maps"
	"slices"
	"sort"
	"time"

	"ebb/internal/civil"
	"ebb/internal/survival"
)

// MinCohort is the size below which a cohort is flagged Small: ebb's rule
// of thumb, since with fewer customers one customer moves the share by
// more than five points.
const MinCohort = 20

// Cohort is the customers whose first order day fell in one calendar month.
type Cohort struct {
	Month string // "2024-03"
	Size  int    // customers
	// Retention has one point per month end from the cohort's month through
	// the month of data_through; the last point is data_through itself
	// when it is not a month end.
	Retention []Retention
	// Lapse is the Kaplan–Meier curve of the time to lapse, in days from
	// the first order day: a customer lapses at their last order day + X
	// when that day is on or before data_through (the event) and is
	// otherwise censored at data_through. Its Rows carry 95% log intervals
	// (survival.ConfLog, as R's default).
	Lapse *survival.Curve
	// Small is set when Size < MinCohort; Note then says why the cohort's
	// figures are shaky. Note is "" otherwise.
	Small bool
	Note  string
}

// Retention is a cohort's state at one date.
type Retention struct {
	At     civil.Date // a month end, or data_through for the last point
	Active int        // customers with recency < X at At: an order day in (At − X, At]
	Share  float64    // Active / Size
}

// CohortTable groups customers into cohorts by the calendar month of their
// first order day, in month order, and gives each its retention table and
// time-to-lapse curve for the churn window of windowDays (X). orderDays
// holds one slice per customer: their order days, sorted ascending (as
// package history keeps them; repeats are harmless). Order days after
// dataThrough are ignored, since the data is not complete there; a customer
// with none left is in no cohort.
//
// CohortTable panics when windowDays < 1 or a customer's days are not
// sorted: both are programming errors, not bad data.
func CohortTable(orderDays [][]civil.Date, windowDays int, dataThrough civil.Date) []Cohort {
	if windowDays < 1 {
		panic(fmt.Sprintf("outcomes: CohortTable with a window of %d days", windowDays))
	}
	x := civil.Date(windowDays)
	members := map[int][][]civil.Date{} // by month number, year*12 + month − 1
	for i, days := range orderDays {
		if !slices.IsSorted(days) {
			panic(fmt.Sprintf("outcomes: CohortTable: order days of customer %d are not sorted", i))
		}
		days = days[:upTo(days, dataThrough)]
		if len(days) == 0 {
			continue
		}
		m := monthOf(days[0])
		members[m] = append(members[m], days)
	}
	last := monthOf(dataThrough)
	var out []Cohort
	for _, m := range slices.Sorted(maps.Keys(members)) {
		cust := members[m]
		c := Cohort{Month: fmt.Sprintf("%04d-%02d", m/12, m%12+1), Size: len(cust)}
		for k := m; k <= last; k++ {
			at := min(monthEnd(k), dataThrough)
			active := 0
			for _, days := range cust {
				if j := upTo(days, at); j > 0 && days[j-1] > at-x {
					active++
				}
			}
			c.Retention = append(c.Retention, Retention{At: at, Active: active, Share: float64(active) / float64(len(cust))})
		}
		c.Lapse = lapseCurve(cust, x, dataThrough)
		if c.Size < MinCohort {
			c.Small = true
			c.Note = fmt.Sprintf("Only %s placed a first order in %s %d; with fewer than %d (a rule of thumb), one customer moves this cohort's figures by several points.",
				customers(c.Size), time.Month(m%12+1), m/12, MinCohort)
		}
		out = append(out, c)
	}
	return out
}

// lapseCurve is the Kaplan–Meier curve of the time from first order day to
// lapse (last order day + x) for customers with order days ≤ dataThrough.
func lapseCurve(cust [][]civil.Date, x, dataThrough civil.Date) *survival.Curve {
	times := make([]int32, len(cust))
	events := make([]bool, len(cust))
	for i, days := range cust {
		first, lastDay := days[0], days[len(days)-1]
		if lapse := lastDay + x; lapse <= dataThrough {
			times[i], events[i] = int32(lapse-first), true
		} else {
			times[i] = int32(dataThrough - first)
		}
	}
	c, err := survival.KaplanMeierDays(times, events)
	if err != nil {
		// Every time is ≥ 0: first ≤ last ≤ dataThrough and x ≥ 1.
		panic(fmt.Sprintf("outcomes: lapse times: %v", err))
	}
	return c
}

// upTo returns the number of days on or before d in ascending days.
func upTo(days []civil.Date, d civil.Date) int {
	return sort.Search(len(days), func(i int) bool { return days[i] > d })
}

// monthOf numbers d's calendar month as year*12 + month − 1.
func monthOf(d civil.Date) int {
	y, m, _ := d.YMD()
	return y*12 + m - 1
}

// monthEnd returns the last day of month number k (see monthOf).
func monthEnd(k int) civil.Date {
	y, m := k/12, k%12+1
	return civil.FromYMD(y, m, civil.DaysIn(y, m))
}
