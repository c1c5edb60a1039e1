package ingest

import (
	"bufio"
	"bytes"
	"fmt"
	"strconv"
	"strings"
)

// Columns names the header of each order field. An empty name means "guess
// from the header" for customer and date, and "use the usual names, if any"
// for amount and ref. A name may also be a 1-based column number.
type Columns struct {
	Customer string
	Date     string
	Amount   string
	Ref      string
}

// ParseColumns reads "customer=COL,date=COL,amount=COL,ref=COL" (any subset).
func ParseColumns(s string) (Columns, error) {
	var c Columns
	if strings.TrimSpace(s) == "" {
		return c, nil
	}
	for _, part := range strings.Split(s, ",") {
		k, v, ok := strings.Cut(part, "=")
		k, v = strings.TrimSpace(strings.ToLower(k)), strings.TrimSpace(v)
		if !ok || v == "" {
			return c, fmt.Errorf("column mapping %q: want FIELD=COLUMN, e.g. customer=client_no", part)
		}
		switch k {
		case "customer":
			c.Customer = v
		case "date":
			c.Date = v
		case "amount":
			c.Amount = v
		case "ref":
			c.Ref = v
		default:
			return c, fmt.Errorf("column mapping %q: unknown field %q (want customer, date, amount or ref)", part, k)
		}
	}
	return c, nil
}

// Usual header names, in order of preference, after normalising (lower case,
// spaces and hyphens as underscores).
var usualNames = map[string][]string{
	"customer": {"customer_id", "customer", "customer_key", "customer_number", "customer_no", "client_id", "client", "user_id", "buyer_id", "account_id", "member_id"},
	"date":     {"order_date", "date", "order_day", "ordered_at", "order_time", "order_timestamp", "order_datetime", "purchase_date", "created_at", "timestamp", "datetime"},
	"amount":   {"amount", "order_amount", "order_total", "total", "order_value", "value", "revenue", "net_amount", "gross_amount", "sales"},
	"ref":      {"order_id", "order_ref", "order_reference", "reference", "order_number", "order_no", "invoice_id", "invoice_number", "transaction_id", "ref"},
}

func normalise(h string) string {
	h = strings.ToLower(strings.TrimSpace(h))
	return strings.Map(func(r rune) rune {
		if r == ' ' || r == '-' {
			return '_'
		}
		return r
	}, h)
}

// columnIndex is the resolved position (0-based, -1 = absent) of each field.
type columnIndex struct {
	customer, date, amount, ref int
}

// resolve maps the header to field positions. It returns a message for the
// user when a required column cannot be found or a named one does not exist.
func resolve(header []string, want Columns) (columnIndex, string) {
	norm := make([]string, len(header))
	for i, h := range header {
		norm[i] = normalise(h)
	}
	find := func(field, explicit string, required bool) (int, string) {
		if explicit != "" {
			n := normalise(explicit)
			for i, h := range norm {
				if h == n {
					return i, ""
				}
			}
			if k, err := strconv.Atoi(explicit); err == nil && k >= 1 && k <= len(header) {
				return k - 1, ""
			}
			return -1, fmt.Sprintf("the %s column %q is not in the header (found %s)", field, explicit, headerList(header))
		}
		for _, name := range usualNames[field] {
			for i, h := range norm {
				if h == name {
					return i, ""
				}
			}
		}
		if required {
			return -1, fmt.Sprintf("no %s column found in the header (found %s); name it in the column mapping, e.g. %s=COLUMN", field, headerList(header), field)
		}
		return -1, ""
	}
	var ix columnIndex
	var msg string
	if ix.customer, msg = find("customer", want.Customer, true); msg != "" {
		return ix, msg
	}
	if ix.date, msg = find("date", want.Date, true); msg != "" {
		return ix, msg
	}
	if ix.amount, msg = find("amount", want.Amount, false); msg != "" {
		return ix, msg
	}
	if ix.ref, msg = find("ref", want.Ref, false); msg != "" {
		return ix, msg
	}
	seen := map[int]string{}
	for _, f := range []struct {
		name string
		i    int
	}{{"customer", ix.customer}, {"date", ix.date}, {"amount", ix.amount}, {"ref", ix.ref}} {
		if f.i < 0 {
			continue
		}
		if other, dup := seen[f.i]; dup {
			return ix, fmt.Sprintf("column %q is mapped to both %s and %s", header[f.i], other, f.name)
		}
		seen[f.i] = f.name
	}
	return ix, ""
}

// detectDelimiter looks at the first line and picks the most frequent of
// comma, semicolon and tab outside quotes; comma when none occurs.
func detectDelimiter(br *bufio.Reader) byte {
	head, _ := br.Peek(64 << 10)
	if i := bytes.IndexByte(head, '\n'); i >= 0 {
		head = head[:i]
	}
	counts := map[byte]int{}
	inQuote := false
	for _, c := range head {
		switch {
		case c == '"':
			inQuote = !inQuote
		case !inQuote && (c == ',' || c == ';' || c == '\t'):
			counts[c]++
		}
	}
	best := byte(',')
	for _, c := range []byte{',', ';', '\t'} {
		if counts[c] > counts[best] {
			best = c
		}
	}
	return best
}

// skipBOM drops a UTF-8 byte order mark.
func skipBOM(br *bufio.Reader) {
	if b, err := br.Peek(3); err == nil && b[0] == 0xEF && b[1] == 0xBB && b[2] == 0xBF {
		br.Discard(3)
	}
}

// DelimiterName names a delimiter for summaries.
func DelimiterName(d byte) string {
	switch d {
	case ',':
		return "comma"
	case ';':
		return "semicolon"
	case '\t':
		return "tab"
	}
	return fmt.Sprintf("%q", d)
}

// headerList names the header's columns for a message, shortened so that a
// huge header (a whole file read as one line) cannot make a huge message:
// at most 12 names of at most 40 characters each.
func headerList(header []string) string {
	const maxNames, maxLen = 12, 40
	var names []string
	for i, h := range header {
		if i == maxNames {
			names = append(names, fmt.Sprintf("and %d more", len(header)-maxNames))
			break
		}
		if r := []rune(h); len(r) > maxLen {
			h = string(r[:maxLen]) + "…"
		}
		names = append(names, h)
	}
	return strings.Join(names, ", ")
}
