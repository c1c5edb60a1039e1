package ingest

import (
	"bufio"
	"encoding/csv"
	"errors"
	"io"
	"strings"
	"time"
)

// DateStyle is how a file's sample dates look.
type DateStyle string

const (
	DatesISO        DateStyle = "iso"         // YYYY-MM-DD, with or without a time
	DatesDayFirst   DateStyle = "day-first"   // slash dates whose first part exceeds 12 somewhere
	DatesMonthFirst DateStyle = "month-first" // slash dates whose second part exceeds 12 somewhere
	DatesAmbiguous  DateStyle = "ambiguous"   // slash dates that read either way: the user must choose
	DatesUnknown    DateStyle = "unknown"     // none of these: the user must give a format
)

// Preview is what the first lines of an order file show: enough to confirm
// the column mapping and the date layout before importing.
type Preview struct {
	Delimiter byte
	Header    []string
	Rows      [][]string // up to the requested number of data rows
	Columns   Columns    // guessed header names; "" where no usual name matched
	Dates     DateStyle
}

// Sniff reads the start of an order file (never more than 1 MiB) and guesses
// its delimiter, columns and date style. It does not validate rows; the
// import does.
func Sniff(r io.Reader, rows int) (*Preview, error) {
	br := bufio.NewReaderSize(io.LimitReader(r, 1<<20), 64<<10)
	skipBOM(br)
	p := &Preview{Delimiter: detectDelimiter(br)}
	cr := csv.NewReader(br)
	cr.Comma = rune(p.Delimiter)
	cr.FieldsPerRecord = -1
	cr.LazyQuotes = true // a preview shows what is there; the import is strict
	header, err := cr.Read()
	if errors.Is(err, io.EOF) {
		return nil, errors.New("the file is empty")
	}
	if err != nil {
		return nil, err
	}
	for _, h := range header {
		p.Header = append(p.Header, strings.TrimSpace(h))
	}
	var dates []string
	dateCol := guess(p.Header, "date")
	for len(p.Rows) < rows || len(dates) < 200 {
		rec, err := cr.Read()
		if err != nil {
			break
		}
		if len(p.Rows) < rows {
			p.Rows = append(p.Rows, append([]string(nil), rec...))
		}
		if dateCol >= 0 && dateCol < len(rec) {
			dates = append(dates, strings.TrimSpace(rec[dateCol]))
		}
	}
	name := func(i int) string {
		if i < 0 {
			return ""
		}
		return p.Header[i]
	}
	p.Columns = Columns{Customer: name(guess(p.Header, "customer")), Date: name(dateCol), Amount: name(guess(p.Header, "amount")), Ref: name(guess(p.Header, "ref"))}
	p.Dates = dateStyle(dates)
	return p, nil
}

// guess returns the position of the first usual name for field, or -1.
func guess(header []string, field string) int {
	for _, name := range usualNames[field] {
		for i, h := range header {
			if normalise(h) == name {
				return i
			}
		}
	}
	return -1
}

// dateStyle classifies sample date values: a slash date with a first part
// over 12 can only be day-first, with a second part over 12 only
// month-first; if neither occurs the samples read both ways.
func dateStyle(samples []string) DateStyle {
	if len(samples) == 0 {
		return DatesUnknown
	}
	iso, slash, firstBig, secondBig := 0, 0, false, false
	p := &dateParser{loc: time.UTC, utc: true}
	for _, s := range samples {
		// An ISO-shaped date counts as ISO even when it is not a real day:
		// the import names that row, the layout is still right.
		if _, _, isISO := p.parseISO(s); isISO {
			iso++
			continue
		}
		date, _, _ := strings.Cut(s, " ")
		if a, b, _, ok := splitSlash(date); ok {
			slash++
			firstBig = firstBig || a > 12
			secondBig = secondBig || b > 12
		}
	}
	switch {
	case iso == len(samples):
		return DatesISO
	case slash+iso < len(samples):
		return DatesUnknown
	case firstBig && !secondBig:
		return DatesDayFirst
	case secondBig && !firstBig:
		return DatesMonthFirst
	case !firstBig && !secondBig:
		return DatesAmbiguous
	}
	return DatesUnknown
}
