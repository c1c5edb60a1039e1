package ingest

import (
	"bufio"
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

	"ebb/internal/civil"
)

// Customer is one row of a customers file.
type Customer struct {
	ID          int32
	Key         string
	Email       string
	Signup      civil.Date // valid when HasSignup
	HasSignup   bool
	Contactable bool
	Attributes  []string // values in the order of CustomerSummary.Attributes
}

// CustomerSummary describes a customers file that was read.
type CustomerSummary struct {
	File         string
	Delimiter    byte
	Attributes   []string // attribute column names after the fixed ones
	Rows         int
	Accepted     int
	Skipped      int
	NonContact   int // customers marked contactable=false
	Problems     []Problem
	ProblemCount int

	onProblem func(Problem)
}

func (s *CustomerSummary) problem(p Problem) {
	if s.onProblem != nil {
		s.onProblem(p)
	}
	s.ProblemCount++
	if len(s.Problems) < MaxShown {
		s.Problems = append(s.Problems, p)
	}
}

// CustomerOptions configure ReadCustomers.
type CustomerOptions struct {
	File   string
	Policy Policy
	Keys   *Keys      // customer key → id; new keys get new ids
	Today  civil.Date // later sign-up dates are errors
	// OnProblem, if set, sees every problem.
	OnProblem func(Problem)
}

var fixedCustomerColumns = []string{"customer_id", "email", "signup_date", "contactable"}

// MaxAttributes bounds the attribute columns of a customers file.
const MaxAttributes = 20

// ReadCustomers reads a customers file: customer_id,email,signup_date,
// contactable, then any categorical attribute columns. Only customer_id is
// required to have a value; contactable is true unless it says false, no,
// n or 0. The file is small enough to return whole (one row per customer).
func ReadCustomers(ctx context.Context, r io.Reader, opt CustomerOptions) ([]Customer, *CustomerSummary, error) {
	sum := &CustomerSummary{File: opt.File, onProblem: opt.OnProblem}
	reject := func(line, col int, msg string) ([]Customer, *CustomerSummary, error) {
		sum.problem(Problem{File: opt.File, Line: line, Col: col, Message: msg})
		return nil, sum, &Rejected{File: opt.File, Problems: sum.Problems, Count: sum.ProblemCount}
	}
	br := bufio.NewReaderSize(r, 64<<10)
	skipBOM(br)
	sum.Delimiter = detectDelimiter(br)
	cr := csv.NewReader(br)
	cr.Comma = rune(sum.Delimiter)
	cr.FieldsPerRecord = -1
	header, err := cr.Read()
	if err == io.EOF {
		return reject(1, 0, "the file is empty; want a header line starting customer_id,email,signup_date,contactable")
	}
	if err != nil {
		_, err := csvFailure(&OrderSummary{}, opt.File, err)
		return nil, sum, err
	}
	if len(header) < len(fixedCustomerColumns) {
		return reject(1, 0, fmt.Sprintf("the header must start with %s", strings.Join(fixedCustomerColumns, ",")))
	}
	for i, want := range fixedCustomerColumns {
		if got := normalise(header[i]); got != want {
			return reject(1, i+1, fmt.Sprintf("column %d is %q but must be %q (the header must start with %s)", i+1, header[i], want, strings.Join(fixedCustomerColumns, ",")))
		}
	}
	attrs := header[len(fixedCustomerColumns):]
	if len(attrs) > MaxAttributes {
		return reject(1, 0, fmt.Sprintf("%d attribute columns; at most %d are allowed", len(attrs), MaxAttributes))
	}
	seenAttr := map[string]bool{}
	for i, a := range attrs {
		a = normalise(a)
		if a == "" || !utf8.ValidString(a) || seenAttr[a] {
			return reject(1, len(fixedCustomerColumns)+i+1, fmt.Sprintf("attribute column name %q is empty, repeated or not UTF-8", attrs[i]))
		}
		seenAttr[a] = true
		sum.Attributes = append(sum.Attributes, a)
	}
	ncols := len(header)

	var out []Customer
	seen := map[string]int{}
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			_, err := csvFailure(&OrderSummary{}, opt.File, err)
			return nil, sum, err
		}
		sum.Rows++
		if sum.Rows&4095 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, sum, err
			}
		}
		line, _ := cr.FieldPos(0)
		before := sum.ProblemCount
		bad := func(col int, msg string) {
			name := ""
			if col >= 0 {
				name = normalise(header[col])
			}
			sum.problem(Problem{File: opt.File, Line: line, Col: col + 1, Column: name, Message: msg})
		}
		if len(rec) != ncols {
			bad(-1, fmt.Sprintf("has %d fields but the header has %d", len(rec), ncols))
			sum.Skipped++
			continue
		}
		c := Customer{Contactable: true}
		c.Key = strings.TrimSpace(rec[0])
		switch {
		case c.Key == "":
			bad(0, "the customer key is empty")
		case !utf8.ValidString(c.Key) || len(c.Key) > 256:
			bad(0, "the customer key is not valid UTF-8 or longer than 256 bytes")
		default:
			if prev, dup := seen[c.Key]; dup {
				bad(0, fmt.Sprintf("customer %q already appears on line %d", c.Key, prev))
			}
		}
		c.Email = strings.TrimSpace(rec[1])
		if c.Email != "" && (!strings.Contains(c.Email, "@") || strings.ContainsAny(c.Email, " \t,;<>") || !utf8.ValidString(c.Email)) {
			bad(1, fmt.Sprintf("%q is not an email address", c.Email))
		}
		if s := strings.TrimSpace(rec[2]); s != "" {
			d, err := civil.Parse(s)
			switch {
			case err != nil:
				bad(2, fmt.Sprintf("%q is not a date (want YYYY-MM-DD)", s))
			case d > opt.Today:
				bad(2, fmt.Sprintf("%q is after today (%s)", s, opt.Today))
			default:
				c.Signup, c.HasSignup = d, true
			}
		}
		switch v := strings.ToLower(strings.TrimSpace(rec[3])); v {
		case "", "true", "yes", "y", "1", "t":
		case "false", "no", "n", "0", "f":
			c.Contactable = false
		default:
			bad(3, fmt.Sprintf("%q is not true or false", rec[3]))
		}
		c.Attributes = make([]string, len(attrs))
		for i := range attrs {
			v := strings.TrimSpace(rec[len(fixedCustomerColumns)+i])
			if !utf8.ValidString(v) || len(v) > 200 {
				bad(len(fixedCustomerColumns)+i, "the value is not valid UTF-8 or longer than 200 bytes")
			}
			c.Attributes[i] = strings.Clone(v)
		}
		if sum.ProblemCount != before {
			sum.Skipped++
			continue
		}
		c.Key = strings.Clone(c.Key)
		c.Email = strings.Clone(c.Email)
		seen[c.Key] = line
		c.ID, _ = opt.Keys.ID(c.Key)
		if !c.Contactable {
			sum.NonContact++
		}
		sum.Accepted++
		out = append(out, c)
	}
	if sum.ProblemCount > 0 && opt.Policy == Reject {
		return nil, sum, &Rejected{File: opt.File, Problems: sum.Problems, Count: sum.ProblemCount}
	}
	if sum.Rows == 0 {
		return reject(2, 0, "the file has a header but no customers")
	}
	return out, sum, nil
}
