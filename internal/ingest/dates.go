package ingest

import (
	"fmt"
	"strings"
	"time"

	"ebb/internal/civil"
)

// DateOptions says how order dates are written. The zero value means ISO 8601
// (YYYY-MM-DD, or a timestamp such as 2024-03-14T18:05:00+01:00). Day-first
// and month-first slash dates are accepted only when chosen explicitly: a
// date such as 03/04/2024 is never guessed.
type DateOptions struct {
	// Layout, if set, is an explicit pattern built from YYYY, MM, MMM
	// (Jan…Dec), DD, hh, mm, ss and literal characters, e.g. "DD.MM.YYYY hh:mm".
	// MM, DD and hh accept one or two digits.
	Layout string
	// DayFirst accepts D/M/YYYY (separators / . or -), with an optional
	// " hh:mm[:ss]" time, besides ISO 8601.
	DayFirst bool
	// MonthFirst accepts M/D/YYYY likewise.
	MonthFirst bool
}

// Describe returns the layout in words for messages and summaries.
func (o DateOptions) Describe() string {
	switch {
	case o.Layout != "":
		return o.Layout
	case o.DayFirst:
		return "DD/MM/YYYY (day first)"
	case o.MonthFirst:
		return "MM/DD/YYYY (month first)"
	}
	return "ISO 8601 (YYYY-MM-DD)"
}

type tokenKind uint8

const (
	tokLiteral tokenKind = iota
	tokYear
	tokMonth
	tokMonthName
	tokDay
	tokHour
	tokMinute
	tokSecond
)

type token struct {
	kind tokenKind
	lit  byte
}

// dateParser turns a date field into a civil.Date in the dataset's zone.
type dateParser struct {
	opt    DateOptions
	loc    *time.Location
	utc    bool
	layout []token
}

func newDateParser(opt DateOptions, loc *time.Location) (*dateParser, error) {
	if opt.DayFirst && opt.MonthFirst {
		return nil, fmt.Errorf("choose day-first or month-first, not both")
	}
	if loc == nil {
		loc = time.UTC
	}
	p := &dateParser{opt: opt, loc: loc, utc: loc == time.UTC}
	if opt.Layout != "" {
		toks, err := compileLayout(opt.Layout)
		if err != nil {
			return nil, err
		}
		p.layout = toks
	}
	return p, nil
}

func compileLayout(layout string) ([]token, error) {
	var toks []token
	var have [8]bool
	for i := 0; i < len(layout); {
		rest := layout[i:]
		var k tokenKind
		n := 0
		switch {
		case strings.HasPrefix(rest, "YYYY"):
			k, n = tokYear, 4
		case strings.HasPrefix(rest, "MMM"):
			k, n = tokMonthName, 3
		case strings.HasPrefix(rest, "MM"):
			k, n = tokMonth, 2
		case strings.HasPrefix(rest, "DD"):
			k, n = tokDay, 2
		case strings.HasPrefix(rest, "hh"):
			k, n = tokHour, 2
		case strings.HasPrefix(rest, "mm"):
			k, n = tokMinute, 2
		case strings.HasPrefix(rest, "ss"):
			k, n = tokSecond, 2
		}
		if n == 0 {
			c := layout[i]
			if (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') {
				return nil, fmt.Errorf("date format %q: unknown letter %q at position %d (use YYYY, MM, MMM, DD, hh, mm, ss)", layout, c, i+1)
			}
			toks = append(toks, token{kind: tokLiteral, lit: c})
			i++
			continue
		}
		if have[k] {
			return nil, fmt.Errorf("date format %q repeats %s", layout, rest[:n])
		}
		have[k] = true
		toks = append(toks, token{kind: k})
		i += n
	}
	if !have[tokYear] || !(have[tokMonth] || have[tokMonthName]) || !have[tokDay] {
		return nil, fmt.Errorf("date format %q needs YYYY, MM (or MMM) and DD", layout)
	}
	return toks, nil
}

// parse returns the order day of s, or a message saying why s is not a date.
func (p *dateParser) parse(s string) (civil.Date, string) {
	if p.layout != nil {
		return p.parseLayout(s)
	}
	if d, msg, isISO := p.parseISO(s); isISO {
		return d, msg
	}
	if p.opt.DayFirst || p.opt.MonthFirst {
		return p.parseSlash(s)
	}
	if looksSlash(s) {
		return 0, fmt.Sprintf("%q is not an ISO 8601 date (YYYY-MM-DD); it looks like a day-first or month-first date, so choose one of those explicitly", s)
	}
	return 0, fmt.Sprintf("%q is not a date (want YYYY-MM-DD or an ISO 8601 timestamp)", s)
}

// parseISO reads YYYY-MM-DD with an optional time and zone offset. isISO is
// false when s does not start like an ISO date at all.
func (p *dateParser) parseISO(s string) (d civil.Date, msg string, isISO bool) {
	if len(s) < 10 || s[4] != '-' || s[7] != '-' {
		return 0, "", false
	}
	y, ok1 := num(s[0:4])
	m, ok2 := num(s[5:7])
	day, ok3 := num(s[8:10])
	if !ok1 || !ok2 || !ok3 {
		return 0, "", false
	}
	if !civil.Valid(y, m, day) {
		return 0, fmt.Sprintf("%q is not a real calendar day", s), true
	}
	d = civil.FromYMD(y, m, day)
	if len(s) == 10 {
		return d, "", true
	}
	if c := s[10]; c != 'T' && c != 't' && c != ' ' {
		return 0, fmt.Sprintf("%q is not a date (want YYYY-MM-DD or an ISO 8601 timestamp)", s), true
	}
	d, ok := p.timeSuffix(d, s[11:])
	if !ok {
		return 0, fmt.Sprintf("%q has a time that is not ISO 8601 (want hh:mm[:ss] with an optional Z or ±hh:mm)", s), true
	}
	return d, "", true
}

// timeSuffix validates "hh:mm[:ss[.fff]][Z|±hh[:mm]]" and moves d to the
// dataset's zone when an offset is given. Without an offset the time is
// taken as wall-clock time in the dataset's zone, so the day is d.
func (p *dateParser) timeSuffix(d civil.Date, t string) (civil.Date, bool) {
	if len(t) < 5 || t[2] != ':' {
		return 0, false
	}
	hh, ok1 := num(t[0:2])
	mm, ok2 := num(t[3:5])
	if !ok1 || !ok2 || hh > 23 || mm > 59 {
		return 0, false
	}
	ss := 0
	t = t[5:]
	if len(t) >= 3 && t[0] == ':' {
		var ok bool
		if ss, ok = num(t[1:3]); !ok || ss > 60 {
			return 0, false
		}
		t = t[3:]
		if len(t) > 0 && (t[0] == '.' || t[0] == ',') {
			i := 1
			for i < len(t) && t[i] >= '0' && t[i] <= '9' {
				i++
			}
			if i == 1 {
				return 0, false
			}
			t = t[i:]
		}
	}
	if t == "" {
		return d, true
	}
	var offset int
	switch {
	case t == "Z" || t == "z":
	case t[0] == '+' || t[0] == '-':
		o := t[1:]
		var oh, om int
		var ok bool
		switch len(o) {
		case 2:
			oh, ok = num(o)
		case 4:
			oh, ok = num(o[0:2])
			if ok {
				om, ok = num(o[2:4])
			}
		case 5:
			if o[2] != ':' {
				return 0, false
			}
			oh, ok = num(o[0:2])
			if ok {
				om, ok = num(o[3:5])
			}
		}
		if !ok || oh > 23 || om > 59 {
			return 0, false
		}
		offset = oh*3600 + om*60
		if t[0] == '-' {
			offset = -offset
		}
	default:
		return 0, false
	}
	unix := int64(d)*86400 + int64(hh*3600+mm*60+ss) - int64(offset)
	if p.utc {
		return civil.Date(floorDiv(unix, 86400)), true
	}
	return civil.Of(time.Unix(unix, 0).In(p.loc)), true
}

func (p *dateParser) parseSlash(s string) (civil.Date, string) {
	want := "DD/MM/YYYY"
	if p.opt.MonthFirst {
		want = "MM/DD/YYYY"
	}
	date, rest, _ := strings.Cut(s, " ")
	if rest == "" {
		date, rest, _ = strings.Cut(s, "T")
	}
	a, b, y, ok := splitSlash(date)
	if !ok {
		return 0, fmt.Sprintf("%q is not a date (want %s)", s, want)
	}
	day, m := a, b
	if p.opt.MonthFirst {
		day, m = b, a
	}
	if !civil.Valid(y, m, day) {
		return 0, fmt.Sprintf("%q is not a real calendar day when read as %s", s, want)
	}
	d := civil.FromYMD(y, m, day)
	if rest != "" {
		var ok bool
		if d, ok = p.timeSuffix(d, padHour(rest)); !ok {
			return 0, fmt.Sprintf("%q has a time that is not hh:mm[:ss]", s)
		}
	}
	return d, ""
}

// padHour turns "9:05" into "09:05" so timeSuffix sees two-digit hours.
func padHour(t string) string {
	if len(t) >= 2 && t[1] == ':' {
		return "0" + t
	}
	return t
}

// splitSlash reads A?B?YYYY with one- or two-digit A and B and one separator
// of / . or - used twice.
func splitSlash(s string) (a, b, y int, ok bool) {
	var sep byte
	parts := [3]string{}
	n := 0
	start := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c == '/' || c == '.' || c == '-' {
			if sep == 0 {
				sep = c
			} else if c != sep {
				return 0, 0, 0, false
			}
			if n == 2 {
				return 0, 0, 0, false
			}
			parts[n] = s[start:i]
			n++
			start = i + 1
		}
	}
	if n != 2 {
		return 0, 0, 0, false
	}
	parts[2] = s[start:]
	if len(parts[0]) < 1 || len(parts[0]) > 2 || len(parts[1]) < 1 || len(parts[1]) > 2 || len(parts[2]) != 4 {
		return 0, 0, 0, false
	}
	a, ok1 := num(parts[0])
	b, ok2 := num(parts[1])
	y, ok3 := num(parts[2])
	return a, b, y, ok1 && ok2 && ok3
}

func looksSlash(s string) bool {
	date, _, _ := strings.Cut(s, " ")
	_, _, _, ok := splitSlash(date)
	return ok
}

var monthNames = [...]string{"jan", "feb", "mar", "apr", "may", "jun", "jul", "aug", "sep", "oct", "nov", "dec"}

func (p *dateParser) parseLayout(s string) (civil.Date, string) {
	bad := func() (civil.Date, string) {
		return 0, fmt.Sprintf("%q does not match the date format %s", s, p.opt.Layout)
	}
	y, m, day, hh, mi, ss := 0, 0, 0, 0, 0, 0
	i := 0
	for _, tk := range p.layout {
		switch tk.kind {
		case tokLiteral:
			if i >= len(s) || s[i] != tk.lit {
				return bad()
			}
			i++
		case tokMonthName:
			if i+3 > len(s) {
				return bad()
			}
			name := strings.ToLower(s[i : i+3])
			m = 0
			for k, mn := range monthNames {
				if mn == name {
					m = k + 1
				}
			}
			if m == 0 {
				return bad()
			}
			i += 3
		default:
			minW, maxW := 1, 2
			switch tk.kind {
			case tokYear:
				minW, maxW = 4, 4
			case tokMinute, tokSecond:
				minW = 2
			}
			j := i
			for j < len(s) && j-i < maxW && s[j] >= '0' && s[j] <= '9' {
				j++
			}
			if j-i < minW {
				return bad()
			}
			v, _ := num(s[i:j])
			i = j
			switch tk.kind {
			case tokYear:
				y = v
			case tokMonth:
				m = v
			case tokDay:
				day = v
			case tokHour:
				hh = v
			case tokMinute:
				mi = v
			case tokSecond:
				ss = v
			}
		}
	}
	if i != len(s) {
		return bad()
	}
	if !civil.Valid(y, m, day) || hh > 23 || mi > 59 || ss > 60 {
		return 0, fmt.Sprintf("%q is not a real calendar day or time in the format %s", s, p.opt.Layout)
	}
	return civil.FromYMD(y, m, day), ""
}

func num(s string) (int, bool) {
	if s == "" {
		return 0, false
	}
	n := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c < '0' || c > '9' {
			return 0, false
		}
		n = n*10 + int(c-'0')
	}
	return n, true
}

func floorDiv(a, b int64) int64 {
	q := a / b
	if (a%b != 0) && ((a < 0) != (b < 0)) {
		q--
	}
	return q
}
