package lists

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"strconv"
	"unicode/utf8"

	"ebb/internal/civil"
)

// JSONWriter streams a list as one JSON document, a row at a time, so a
// list of any size is written in flat memory. The document is
//
//	{"list_date":"2026-03-02","attribute_names":["region"],"rows":[
//	{"customer_id":"c-17","email":"a@example.com","probability":0.8123,"band":"high","reasons":"no order for 74 days","attributes":{"region":"north"}},
//	...
//	]}
//
// with one row a line, in the order written. probability is a number with
// 4 decimals; attributes holds every attribute column, in the order of
// attribute_names. Strings are written as given: the spreadsheet guard of
// SafeCell is for CSV only.
type JSONWriter struct {
	bw        *bufio.Writer
	listDate  civil.Date
	attrNames []string
	buf       []byte
	rows      int
	closed    bool
}

// NewJSONWriter writes the head of a list document for the list drawn as of
// listDate and returns a writer for its rows. Attribute names must be
// non-empty and distinct. Call Close to end the document.
func NewJSONWriter(w io.Writer, listDate civil.Date, attrNames []string) (*JSONWriter, error) {
	if err := checkAttrNames(attrNames); err != nil {
		return nil, err
	}
	j := &JSONWriter{bw: bufio.NewWriter(w), listDate: listDate, attrNames: attrNames}
	b := append(j.buf[:0], `{"list_date":"`...)
	b = append(b, listDate.String()...)
	b = append(b, `","attribute_names":[`...)
	for i, n := range attrNames {
		if i > 0 {
			b = append(b, ',')
		}
		b = appendJSONString(b, n)
	}
	b = append(b, `],"rows":[`...)
	j.buf = b
	if _, err := j.bw.Write(b); err != nil {
		return nil, fmt.Errorf("write list json: %w", err)
	}
	return j, nil
}

// Write writes one row. It fails when the row has the wrong number of
// attribute values, a probability outside [0, 1], or a list date other than
// the document's.
func (j *JSONWriter) Write(r Row) error {
	if j.closed {
		return errors.New("write list json: writer is closed")
	}
	if err := checkRow(r, len(j.attrNames)); err != nil {
		return err
	}
	if r.ListDate != j.listDate {
		return fmt.Errorf("write list json: customer %q is on the list of %s, not %s", r.Key, r.ListDate, j.listDate)
	}
	b := j.buf[:0]
	if j.rows > 0 {
		b = append(b, ',')
	}
	b = append(b, "\n{\"customer_id\":"...)
	b = appendJSONString(b, r.Key)
	b = append(b, `,"email":`...)
	b = appendJSONString(b, r.Email)
	b = append(b, `,"probability":`...)
	b = strconv.AppendFloat(b, r.Probability, 'f', 4, 64)
	b = append(b, `,"band":`...)
	b = appendJSONString(b, string(r.Band))
	b = append(b, `,"reasons":`...)
	b = appendJSONString(b, r.Reasons)
	b = append(b, `,"attributes":{`...)
	for i, v := range r.Attrs {
		if i > 0 {
			b = append(b, ',')
		}
		b = appendJSONString(b, j.attrNames[i])
		b = append(b, ':')
		b = appendJSONString(b, v)
	}
	b = append(b, "}}"...)
	j.buf = b
	j.rows++
	if _, err := j.bw.Write(b); err != nil {
		return fmt.Errorf("write list json: %w", err)
	}
	return nil
}

// Close ends the document and flushes it to the underlying writer, which it
// does not close. Closing twice is a no-op.
func (j *JSONWriter) Close() error {
	if j.closed {
		return nil
	}
	j.closed = true
	end := "]}\n"
	if j.rows > 0 {
		end = "\n]}\n"
	}
	if _, err := j.bw.WriteString(end); err != nil {
		return fmt.Errorf("write list json: %w", err)
	}
	if err := j.bw.Flush(); err != nil {
		return fmt.Errorf("write list json: %w", err)
	}
	return nil
}

// appendJSONString appends s as a JSON string (RFC 8259 §7): quotes,
// backslashes and control characters escaped, invalid UTF-8 replaced by
// U+FFFD, and U+2028 and U+2029 escaped so the text is also valid
// JavaScript.
func appendJSONString(b []byte, s string) []byte {
	const hex = "0123456789abcdef"
	b = append(b, '"')
	start := 0
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			if c >= 0x20 && c != '"' && c != '\\' {
				i++
				continue
			}
			b = append(b, s[start:i]...)
			switch c {
			case '"', '\\':
				b = append(b, '\\', c)
			case '\n':
				b = append(b, '\\', 'n')
			case '\r':
				b = append(b, '\\', 'r')
			case '\t':
				b = append(b, '\\', 't')
			default:
				b = append(b, '\\', 'u', '0', '0', hex[c>>4], hex[c&0xf])
			}
			i++
			start = i
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && size == 1 || r == '\u2028' || r == '\u2029' {
			b = append(b, s[start:i]...)
			switch r {
			case utf8.RuneError:
				b = append(b, `\ufffd`...)
			default:
				b = append(b, '\\', 'u', '2', '0', '2', hex[r&0xf])
			}
			i += size
			start = i
			continue
		}
		i += size
	}
	b = append(b, s[start:]...)
	return append(b, '"')
}
