// Package civil holds Date, a calendar day without a time zone, stored as a
// day number so that order histories stay small and gaps are subtractions.
//
// The conversions use the days-from-civil algorithm for the proleptic
// Gregorian calendar (H. Hinnant, "chrono-Compatible Low-Level Date
// Algorithms", 2013), which is exact for every year this program meets and
// needs no time.Time per row.
package civil

import (
	"fmt"
	"time"
)

// Date is a calendar day: the number of days since 1970-01-01.
type Date int32

// FromYMD returns the Date of year y, month m (1–12) and day d (1–31). It does
// not validate; use Valid first for untrusted input.
func FromYMD(y, m, d int) Date {
	if m <= 2 {
		y--
	}
	era := y
	if era < 0 {
		era -= 399
	}
	era /= 400
	yoe := y - era*400
	mp := (m + 9) % 12
	doy := (153*mp+2)/5 + d - 1
	doe := yoe*365 + yoe/4 - yoe/100 + doy
	return Date(era*146097 + doe - 719468)
}

// YMD returns the year, month (1–12) and day (1–31) of d.
func (d Date) YMD() (y, m, day int) {
	z := int(d) + 719468
	era := z
	if era < 0 {
		era -= 146096
	}
	era /= 146097
	doe := z - era*146097
	yoe := (doe - doe/1460 + doe/36524 - doe/146096) / 365
	y = yoe + era*400
	doy := doe - (365*yoe + yoe/4 - yoe/100)
	mp := (5*doy + 2) / 153
	day = doy - (153*mp+2)/5 + 1
	if mp < 10 {
		m = mp + 3
	} else {
		m = mp - 9
	}
	if m <= 2 {
		y++
	}
	return y, m, day
}

// Valid reports whether y-m-d names a real day of the Gregorian calendar.
func Valid(y, m, d int) bool {
	return m >= 1 && m <= 12 && d >= 1 && d <= DaysIn(y, m)
}

// DaysIn returns the number of days in month m of year y.
func DaysIn(y, m int) int {
	switch m {
	case 2:
		if y%4 == 0 && (y%100 != 0 || y%400 == 0) {
			return 29
		}
		return 28
	case 4, 6, 9, 11:
		return 30
	}
	return 31
}

// Weekday returns the day of the week of d.
func (d Date) Weekday() time.Weekday {
	// 1970-01-01 was a Thursday.
	w := (int(d) + 4) % 7
	if w < 0 {
		w += 7
	}
	return time.Weekday(w)
}

// String formats d as YYYY-MM-DD.
func (d Date) String() string {
	y, m, day := d.YMD()
	return fmt.Sprintf("%04d-%02d-%02d", y, m, day)
}

// Of returns the calendar day of t in t's location.
func Of(t time.Time) Date {
	y, m, d := t.Date()
	return FromYMD(y, int(m), d)
}

// Time returns midnight UTC at the start of d.
func (d Date) Time() time.Time {
	y, m, day := d.YMD()
	return time.Date(y, time.Month(m), day, 0, 0, 0, 0, time.UTC)
}

// Parse reads a YYYY-MM-DD date.
func Parse(s string) (Date, error) {
	if len(s) != 10 || s[4] != '-' || s[7] != '-' {
		return 0, fmt.Errorf("%q is not a date (want YYYY-MM-DD)", s)
	}
	y, ok1 := digits(s[0:4])
	m, ok2 := digits(s[5:7])
	d, ok3 := digits(s[8:10])
	if !ok1 || !ok2 || !ok3 || !Valid(y, m, d) {
		return 0, fmt.Errorf("%q is not a date (want YYYY-MM-DD)", s)
	}
	return FromYMD(y, m, d), nil
}

func digits(s string) (int, bool) {
	n := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c < '0' || c > '9' {
			return 0, false
		}
		n = n*10 + int(c-'0')
	}
	return n, len(s) > 0
}
