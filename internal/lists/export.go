package lists

import (
	"encoding/csv"
	"fmt"
	"io"
	"slices"
	"strconv"

	"ebb/internal/civil"
)

// SafeCell returns s made safe to open in a spreadsheet: a cell starting
// with =, +, -, @, a tab (0x09) or a carriage return (0x0D) would be run as
// a formula, so it gets a leading single quote, which spreadsheets read as
// "this is text" (OWASP, "CSV Injection",
// https://owasp.org/www-community/attacks/CSV_Injection). Any other s is
// returned unchanged, without allocating. A negative number such as "-5"
// becomes "'-5" too; that is the price of the rule.
func SafeCell(s string) string {
	if s == "" {
		return s
	}
	switch s[0] {
	case '=', '+', '-', '@', '\t', '\r':
		return "'" + s
	}
	return s
}

// Row is one customer of an exported list.
type Row struct {
	Key         string     // customer key
	Email       string     // may be empty
	Probability float64    // calibrated probability of no reorder within H, in [0, 1]
	Band        Band       // band of Probability
	Reasons     string     // JoinReasons of the customer's reasons
	ListDate    civil.Date // the date the list was drawn as of
	Attrs       []string   // one value per attribute column, in order
}

// listColumns is the fixed head of an exported list's header.
var listColumns = []string{"customer_id", "email", "probability", "band", "reasons", "list_date"}

// holdoutColumns is the header of a holdout (suppression) file.
var holdoutColumns = []string{"customer_id", "email", "list_date"}

// CSVWriter streams a list as CSV, one row at a time, in flat memory.
type CSVWriter struct {
	out    *csvOut
	nAttrs int
}

// NewCSVWriter writes the header of a list export to w and returns a writer
// for its rows. The columns are customer_id, email, probability (4
// decimals), band (high, medium or low), reasons (separated by "; "),
// list_date (YYYY-MM-DD), then one column per name in attrNames. The file
// is RFC 4180 CSV in UTF-8 without a byte-order mark, with CRLF line ends;
// a line break inside a cell is written as CRLF (a lone CR is dropped).
// Every cell, header included, goes through SafeCell. Attribute names must
// be non-empty, distinct, and not one of the fixed columns.
func NewCSVWriter(w io.Writer, attrNames []string) (*CSVWriter, error) {
	if err := checkAttrNames(attrNames); err != nil {
		return nil, err
	}
	out, err := newCSVOut(w, slices.Concat(listColumns, attrNames))
	if err != nil {
		return nil, err
	}
	return &CSVWriter{out: out, nAttrs: len(attrNames)}, nil
}

// Write writes one row. It fails when the row has the wrong number of
// attribute values or a probability outside [0, 1].
func (w *CSVWriter) Write(r Row) error {
	if err := checkRow(r, w.nAttrs); err != nil {
		return err
	}
	o := w.out
	o.prob = strconv.AppendFloat(o.prob[:0], r.Probability, 'f', 4, 64)
	rec := o.rec
	rec[0] = r.Key
	rec[1] = r.Email
	rec[2] = string(o.prob)
	rec[3] = string(r.Band)
	rec[4] = r.Reasons
	rec[5] = o.dateString(r.ListDate)
	copy(rec[len(listColumns):], r.Attrs)
	return o.write()
}

// Flush writes any buffered rows to the underlying writer and reports any
// error from writing.
func (w *CSVWriter) Flush() error { return w.out.flush() }

// HoldoutWriter streams a list's holdout as CSV: the customers selected
// but withheld, which doubles as a suppression list for other campaigns.
type HoldoutWriter struct {
	out *csvOut
}

// NewHoldoutWriter writes the header customer_id,email,list_date to w and
// returns a writer for its rows, in the format of NewCSVWriter.
func NewHoldoutWriter(w io.Writer) (*HoldoutWriter, error) {
	out, err := newCSVOut(w, holdoutColumns)
	if err != nil {
		return nil, err
	}
	return &HoldoutWriter{out: out}, nil
}

// Write writes r's key, email and list date; its other fields are not
// exported.
func (w *HoldoutWriter) Write(r Row) error {
	o := w.out
	o.rec[0] = r.Key
	o.rec[1] = r.Email
	o.rec[2] = o.dateString(r.ListDate)
	return o.write()
}

// Flush writes any buffered rows to the underlying writer and reports any
// error from writing.
func (w *HoldoutWriter) Flush() error { return w.out.flush() }

// csvOut is the part CSVWriter and HoldoutWriter share: an RFC 4180
// writer, one reused record and the formatted list date.
type csvOut struct {
	cw       *csv.Writer
	rec      []string
	prob     []byte
	date     civil.Date
	dateText string
}

func newCSVOut(w io.Writer, header []string) (*csvOut, error) {
	cw := csv.NewWriter(w)
	cw.UseCRLF = true
	o := &csvOut{cw: cw, rec: make([]string, len(header))}
	copy(o.rec, header)
	if err := o.write(); err != nil {
		return nil, fmt.Errorf("write csv header: %w", err)
	}
	return o, nil
}

// write writes the record after making each cell safe.
func (o *csvOut) write() error {
	for i, s := range o.rec {
		o.rec[i] = SafeCell(s)
	}
	return o.cw.Write(o.rec)
}

func (o *csvOut) flush() error {
	o.cw.Flush()
	return o.cw.Error()
}

// dateString formats d, reusing the text of the last date (a list has one).
func (o *csvOut) dateString(d civil.Date) string {
	if o.dateText == "" || d != o.date {
		o.date, o.dateText = d, d.String()
	}
	return o.dateText
}

// checkAttrNames rejects attribute column names that would make an export
// ambiguous.
func checkAttrNames(names []string) error {
	seen := make(map[string]bool, len(names)+len(listColumns))
	for _, c := range listColumns {
		seen[c] = true
	}
	for i, n := range names {
		switch {
		case n == "":
			return fmt.Errorf("export list: attribute column %d has no name", i+1)
		case seen[n]:
			return fmt.Errorf("export list: attribute column %q repeats a column name", n)
		}
		seen[n] = true
	}
	return nil
}

// checkRow rejects a row that does not fit the writer.
func checkRow(r Row, nAttrs int) error {
	if len(r.Attrs) != nAttrs {
		return fmt.Errorf("export list: customer %q has %d attribute values, want %d", r.Key, len(r.Attrs), nAttrs)
	}
	if !(r.Probability >= 0 && r.Probability <= 1) {
		return fmt.Errorf("export list: customer %q has probability %v, want a value in [0, 1]", r.Key, r.Probability)
	}
	return nil
}
