package ingest

import (
	"bufio"
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"strings"
	"time"
	"unicode/utf8"

	"ebb/internal/civil"
)

// Policy says what happens to a file with bad rows.
type Policy int

const (
	// Reject refuses the whole file when any row is bad (the default).
	Reject Policy = iota
	// Skip imports the good rows and reports the bad ones.
	Skip
)

// ParsePolicy reads "reject" or "skip".
func ParsePolicy(s string) (Policy, error) {
	switch s {
	case "", "reject":
		return Reject, nil
	case "skip":
		return Skip, nil
	}
	return Reject, fmt.Errorf("unknown error policy %q (want reject or skip)", s)
}

func (p Policy) String() string {
	if p == Skip {
		return "skip"
	}
	return "reject"
}

// MaxShown is how many problems a summary keeps; the rest are only counted.
const MaxShown = 100

// Order is one accepted order row.
type Order struct {
	Customer  int32
	Day       civil.Date
	Amount    float64 // valid when HasAmount
	HasAmount bool
	Ref       string // "" when the file has no reference for this order
}

// Batch is a group of accepted orders handed to the caller to store. The
// customers first seen in this batch have ids FirstNewID, FirstNewID+1, …
// and keys NewKeys; store them before (or with) the orders.
type Batch struct {
	Orders     []Order
	NewKeys    []string
	FirstNewID int32
}

// OrderOptions configure ReadOrders.
type OrderOptions struct {
	File     string         // the file's name, used in every message
	Columns  Columns        // explicit column choices; empty = from the header
	Dates    DateOptions    // how dates are written; zero = ISO 8601
	Location *time.Location // the dataset's zone for timestamps; nil = UTC
	Today    civil.Date     // later order days are errors
	Policy   Policy
	Keys     *Keys     // customer key → id; required
	Refs     *RefSet   // references already stored; nil = none
	Existing *OrderSet // stored orders, to drop exact repeats in appends without references; nil = none
	// BatchSize is the number of orders per Batch (default 16384).
	BatchSize int
	// OnProblem, if set, sees every problem, beyond the MaxShown kept in
	// the summary (for a full report of skipped rows).
	OnProblem func(Problem)
	// Size is the file's size in bytes, when known; it lets the reader size
	// its reference set once instead of growing it row by row.
	Size int64
}

// OrderSummary describes what ReadOrders read.
type OrderSummary struct {
	File      string
	Delimiter byte
	Header    []string
	// Column positions used (0-based, -1 = absent).
	CustomerCol, DateCol, AmountCol, RefCol int
	Rows                                    int // data records read
	Accepted                                int // orders handed to the sink
	Skipped                                 int // rows with problems (Skip policy)
	// Repeats counts rows left out because the same order is already stored
	// (same reference and content, or, without references, the same
	// customer, day and amount); RepeatLines lists the first MaxShown.
	Repeats      int
	RepeatLines  []int
	NewCustomers int
	FirstDay     civil.Date
	LastDay      civil.Date
	Problems     []Problem // the first MaxShown problems
	ProblemCount int       // all problems

	onProblem func(Problem)
}

// HasAmount reports whether the file had an amount column.
func (s *OrderSummary) HasAmount() bool { return s.AmountCol >= 0 }

// HasRef reports whether the file had an order reference column.
func (s *OrderSummary) HasRef() bool { return s.RefCol >= 0 }

func (s *OrderSummary) problem(p Problem) {
	if s.onProblem != nil {
		s.onProblem(p)
	}
	s.ProblemCount++
	if len(s.Problems) < MaxShown {
		s.Problems = append(s.Problems, p)
	}
}

// ReadOrders streams an order file, validates every row, maps customer keys
// to ids and hands accepted orders to sink in batches. It never holds the
// whole file in memory.
//
// Under the Reject policy sink is not called again after the first problem,
// reading continues to count every problem, and the result is a *Rejected
// error; the caller must discard what sink already stored. Under Skip, bad
// rows are left out and listed in the summary. A file that cannot be read as
// CSV at all (broken quoting, no header, no orders) is rejected under either
// policy.
func ReadOrders(ctx context.Context, r io.Reader, opt OrderOptions, sink func(Batch) error) (*OrderSummary, error) {
	if opt.Keys == nil {
		panic("ingest.ReadOrders: OrderOptions.Keys is nil")
	}
	if opt.BatchSize <= 0 {
		opt.BatchSize = 16384
	}
	sum := &OrderSummary{File: opt.File, CustomerCol: -1, DateCol: -1, AmountCol: -1, RefCol: -1, onProblem: opt.OnProblem}
	reject := func(line, col int, field, msg string) (*OrderSummary, error) {
		sum.problem(Problem{File: opt.File, Line: line, Col: col, Column: field, Message: msg})
		return sum, &Rejected{File: opt.File, Problems: sum.Problems, Count: sum.ProblemCount}
	}
	dates, err := newDateParser(opt.Dates, opt.Location)
	if err != nil {
		return reject(0, 0, "", err.Error())
	}

	br := bufio.NewReaderSize(r, 256<<10)
	skipBOM(br)
	sum.Delimiter = detectDelimiter(br)
	if opt.Size > 0 {
		rows := estimateRows(br, opt.Size)
		if opt.Refs != nil {
			opt.Refs.reserve(rows)
		}
		// Order logs have a few orders per customer; a third of the rows
		// is a generous guess that costs little when wrong.
		opt.Keys.reserve(rows / 3)
	}
	cr := csv.NewReader(br)
	cr.Comma = rune(sum.Delimiter)
	cr.FieldsPerRecord = -1
	cr.ReuseRecord = true

	header, err := cr.Read()
	if err == io.EOF {
		return reject(1, 0, "", "the file is empty; want a header line such as customer_id,order_date,amount,order_id and one line per order")
	}
	if err != nil {
		return csvFailure(sum, opt.File, err)
	}
	sum.Header = append([]string(nil), header...)
	for i := range sum.Header {
		sum.Header[i] = strings.TrimSpace(sum.Header[i])
		if !utf8.ValidString(sum.Header[i]) {
			return reject(1, i+1, "", "the header is not valid UTF-8; save the file as UTF-8")
		}
	}
	ix, msg := resolve(sum.Header, opt.Columns)
	if msg != "" {
		return reject(1, 0, "", msg)
	}
	sum.CustomerCol, sum.DateCol, sum.AmountCol, sum.RefCol = ix.customer, ix.date, ix.amount, ix.ref
	ncols := len(sum.Header)
	name := func(i int) string { return sum.Header[i] }

	firstNew := opt.Keys.Len()
	flushed := firstNew
	batch := make([]Order, 0, opt.BatchSize)
	sinking := true
	flush := func() error {
		if !sinking || (len(batch) == 0 && opt.Keys.Len() == flushed) {
			return nil
		}
		b := Batch{Orders: batch, NewKeys: opt.Keys.Since(flushed), FirstNewID: int32(flushed)}
		flushed = opt.Keys.Len()
		batch = make([]Order, 0, opt.BatchSize)
		return sink(b)
	}

	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return csvFailure(sum, opt.File, err)
		}
		sum.Rows++
		if sum.Rows&4095 == 0 {
			if err := ctx.Err(); err != nil {
				return sum, err
			}
		}
		line, _ := cr.FieldPos(0)
		before := sum.ProblemCount
		bad := func(col int, msg string) {
			field := ""
			if col >= 0 && col < ncols {
				field = name(col)
			}
			sum.problem(Problem{File: opt.File, Line: line, Col: col + 1, Column: field, Message: msg})
		}
		if len(rec) != ncols {
			bad(-1, fmt.Sprintf("has %d fields but the header has %d (a value with an unquoted %s?)", len(rec), ncols, DelimiterName(sum.Delimiter)))
			sum.Skipped++
			sinking = sinking && opt.Policy == Skip
			continue
		}

		key := strings.TrimSpace(rec[ix.customer])
		switch {
		case key == "":
			bad(ix.customer, "the customer key is empty")
		case !utf8.ValidString(key):
			bad(ix.customer, "the customer key is not valid UTF-8; save the file as UTF-8")
		case len(key) > 256:
			bad(ix.customer, fmt.Sprintf("the customer key is %d bytes long; at most 256 are allowed", len(key)))
		}

		dateField := strings.TrimSpace(rec[ix.date])
		day, dmsg := dates.parse(dateField)
		switch {
		case dateField == "":
			bad(ix.date, "the order date is empty")
		case dmsg != "":
			bad(ix.date, dmsg)
		case day > opt.Today:
			bad(ix.date, fmt.Sprintf("%q is after today (%s); orders cannot be in the future", dateField, opt.Today))
		case day < minDay:
			bad(ix.date, fmt.Sprintf("%q is before 1900; check the date format", dateField))
		}

		var o Order
		if ix.amount >= 0 {
			f := strings.TrimSpace(rec[ix.amount])
			if f != "" {
				v, amsg := parseAmount(f)
				if amsg != "" {
					bad(ix.amount, amsg)
				}
				o.Amount, o.HasAmount = v, amsg == ""
			}
		}
		if ix.ref >= 0 {
			o.Ref = strings.TrimSpace(rec[ix.ref])
			if !utf8.ValidString(o.Ref) {
				bad(ix.ref, "the order reference is not valid UTF-8; save the file as UTF-8")
			} else if len(o.Ref) > 256 {
				bad(ix.ref, fmt.Sprintf("the order reference is %d bytes long; at most 256 are allowed", len(o.Ref)))
			}
		}

		repeat := false
		if sum.ProblemCount == before && o.Ref != "" && opt.Refs != nil {
			if prev, added := opt.Refs.add(o.Ref, int32(line)); !added {
				bad(ix.ref, fmt.Sprintf("order reference %q already appears on line %d", o.Ref, prev))
			} else if len(opt.Refs.stored) > 0 {
				stored, same := opt.Refs.storedAs(o.Ref, orderKeyFor(opt.Keys, key, day, o))
				if same {
					repeat = true
				} else if stored {
					bad(ix.ref, fmt.Sprintf("order reference %q is already stored for another customer, date or amount", o.Ref))
				}
			}
		}
		if sum.ProblemCount != before {
			sum.Skipped++
			sinking = sinking && opt.Policy == Skip
			continue
		}

		if !repeat && opt.Existing != nil && ix.ref < 0 {
			id, known := opt.Keys.Lookup(key)
			repeat = known && opt.Existing.take(id, day, o.Amount, o.HasAmount)
		}
		if repeat {
			sum.Repeats++
			if len(sum.RepeatLines) < MaxShown {
				sum.RepeatLines = append(sum.RepeatLines, line)
			}
			continue
		}

		o.Customer, _ = opt.Keys.ID(key)
		o.Day = day
		if o.Ref != "" {
			o.Ref = strings.Clone(o.Ref)
		}
		if sum.Accepted == 0 || day < sum.FirstDay {
			sum.FirstDay = day
		}
		if sum.Accepted == 0 || day > sum.LastDay {
			sum.LastDay = day
		}
		sum.Accepted++
		if !sinking {
			continue
		}
		batch = append(batch, o)
		if len(batch) == opt.BatchSize {
			if err := flush(); err != nil {
				return sum, err
			}
		}
	}
	sum.NewCustomers = opt.Keys.Len() - firstNew

	if sum.ProblemCount > 0 && opt.Policy == Reject {
		return sum, &Rejected{File: opt.File, Problems: sum.Problems, Count: sum.ProblemCount}
	}
	if sum.Rows == 0 {
		return reject(2, 0, "", "the file has a header but no orders")
	}
	if sum.Accepted == 0 && sum.Repeats == 0 {
		sum.ProblemCount++ // keep the row problems listed, and say why nothing is left
		return sum, &Rejected{File: opt.File, Problems: sum.Problems, Count: sum.ProblemCount,
			Summary: "no row of the file is a valid order"}
	}
	if err := flush(); err != nil {
		return sum, err
	}
	return sum, nil
}

var minDay = civil.FromYMD(1900, 1, 1)

// estimateRows guesses a file's row count from its size and the mean length
// of the lines in its first 256 KiB.
func estimateRows(br *bufio.Reader, size int64) int {
	head, _ := br.Peek(br.Size())
	lines := bytes.Count(head, []byte{'\n'})
	if lines < 2 {
		return 0
	}
	return int(min(size/int64(len(head)/lines), 50_000_000))
}

// orderKeyFor is the identity of a row as an order already stored would
// have it; a customer not yet known cannot match anything stored.
func orderKeyFor(keys *Keys, key string, day civil.Date, o Order) orderKey {
	id, ok := keys.Lookup(key)
	if !ok {
		id = -1
	}
	return keyOf(id, day, o.Amount, o.HasAmount)
}

// csvFailure turns an encoding/csv syntax error into a rejection naming the
// line and column; a file whose quoting is broken cannot be read past it.
func csvFailure(sum *OrderSummary, file string, err error) (*OrderSummary, error) {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		msg := pe.Err.Error()
		switch {
		case errors.Is(pe.Err, csv.ErrQuote):
			msg = `a quoted value is not closed, or a quote inside it is not doubled ("")`
		case errors.Is(pe.Err, csv.ErrBareQuote):
			msg = `a quote (") appears inside an unquoted value; quote the whole value and double the inner quote`
		}
		sum.problem(Problem{File: file, Line: pe.Line, Col: pe.Column, Message: msg + "; the file cannot be read past this point"})
		return sum, &Rejected{File: file, Problems: sum.Problems, Count: sum.ProblemCount}
	}
	return sum, fmt.Errorf("read %s: %w", file, err)
}

// parseAmount reads a plain decimal number such as 12, 12.5 or 1234.56.
// Currency signs, thousands separators and decimal commas are refused with a
// message rather than guessed.
func parseAmount(s string) (float64, string) {
	neg := false
	i := 0
	if s[0] == '-' || s[0] == '+' {
		neg = s[0] == '-'
		i = 1
	}
	var intPart, frac int64
	var scale float64 = 1
	digits, fracDigits := 0, 0
	for ; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
		intPart = intPart*10 + int64(s[i]-'0')
		digits++
		if digits > 15 {
			return 0, fmt.Sprintf("%q is too large for an order amount", s)
		}
	}
	if i < len(s) && s[i] == '.' {
		i++
		for ; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
			if fracDigits < 9 {
				frac = frac*10 + int64(s[i]-'0')
				scale *= 10
			}
			fracDigits++
		}
	}
	if i != len(s) || digits+fracDigits == 0 {
		if strings.ContainsAny(s, ",") {
			return 0, fmt.Sprintf("%q is not a plain number (want e.g. 1234.50: a dot for decimals and no thousands separators)", s)
		}
		return 0, fmt.Sprintf("%q is not a number (want e.g. 12.50, without a currency sign)", s)
	}
	if neg {
		return 0, fmt.Sprintf("%q is negative; refunds and credits are not orders, leave them out", s)
	}
	return float64(intPart) + float64(frac)/scale, ""
}
