// Package frame holds a feature matrix: named float64 columns stored column
// by column, a 0/1 label per row and the row keys (customer id and snapshot
// day) every row of a training set carries.
//
// Values are float64. float32 would halve memory (1M rows × 12 features is
// 96 MB as float64, 48 MB as float32) but the reference checks of the model
// package (statsmodels, R, scikit-learn) are met to 1e-7 only when the inputs
// are the same doubles those libraries read; a float32 copy of 2.66 is not
// 2.66. Missing values are NaN; nothing else in a frame may be NaN.
package frame

import (
	"fmt"
	"math"
)

// Missing is the value stored for a missing feature value.
var Missing = math.NaN()

// IsMissing reports whether v is the missing-value marker.
func IsMissing(v float64) bool { return v != v }

// Frame is a feature matrix of Rows() rows and Cols() named columns.
// Columns are stored contiguously (column-major). Labels, customers and days
// are per-row slices of length Rows(); labels may be nil (a frame to score).
type Frame struct {
	names     []string
	index     map[string]int
	cols      [][]float64
	labels    []uint8
	customers []int32
	days      []int32
	rows      int
}

// New returns a frame with the given column names and rows rows, every value
// zero and with labels and keys allocated (all zero), ready to be filled
// through Col, Labels, Customers and Days. One allocation per column.
func New(names []string, rows int) (*Frame, error) {
	if rows < 0 {
		return nil, fmt.Errorf("new frame: negative row count %d", rows)
	}
	cols := make([][]float64, len(names))
	for j := range cols {
		cols[j] = make([]float64, rows)
	}
	return FromColumns(names, cols, make([]uint8, rows), make([]int32, rows), make([]int32, rows))
}

// FromColumns builds a frame around the given slices without copying them.
// Every column, and labels, customers and days when not nil, must have the
// same length; labels must be 0 or 1; names must be distinct and not empty.
// A frame with no columns takes its row count from the first non-nil key or
// label slice.
func FromColumns(names []string, cols [][]float64, labels []uint8, customers, days []int32) (*Frame, error) {
	if len(names) != len(cols) {
		return nil, fmt.Errorf("build frame: %d names for %d columns", len(names), len(cols))
	}
	rows := -1
	check := func(what string, n int) error {
		if rows < 0 {
			rows = n
			return nil
		}
		if n != rows {
			return fmt.Errorf("build frame: %s has %d rows, want %d", what, n, rows)
		}
		return nil
	}
	index := make(map[string]int, len(names))
	for j, name := range names {
		if name == "" {
			return nil, fmt.Errorf("build frame: column %d has no name", j)
		}
		if _, dup := index[name]; dup {
			return nil, fmt.Errorf("build frame: column %q appears twice", name)
		}
		index[name] = j
		if err := check("column "+name, len(cols[j])); err != nil {
			return nil, err
		}
	}
	if labels != nil {
		if err := check("labels", len(labels)); err != nil {
			return nil, err
		}
		for i, y := range labels {
			if y > 1 {
				return nil, fmt.Errorf("build frame: label of row %d is %d, want 0 or 1", i, y)
			}
		}
	}
	if customers != nil {
		if err := check("customers", len(customers)); err != nil {
			return nil, err
		}
	}
	if days != nil {
		if err := check("days", len(days)); err != nil {
			return nil, err
		}
	}
	if rows < 0 {
		rows = 0
	}
	return &Frame{
		names:     append([]string(nil), names...),
		index:     index,
		cols:      cols,
		labels:    labels,
		customers: customers,
		days:      days,
		rows:      rows,
	}, nil
}

// Rows is the number of rows.
func (f *Frame) Rows() int { return f.rows }

// Cols is the number of columns.
func (f *Frame) Cols() int { return len(f.cols) }

// Names returns the column names in order (a copy).
func (f *Frame) Names() []string { return append([]string(nil), f.names...) }

// Name returns the name of column j.
func (f *Frame) Name(j int) string { return f.names[j] }

// Index returns the position of the named column, or -1.
func (f *Frame) Index(name string) int {
	if j, ok := f.index[name]; ok {
		return j
	}
	return -1
}

// Col returns the values of the named column (shared, not copied) and whether
// the column exists.
func (f *Frame) Col(name string) ([]float64, bool) {
	j, ok := f.index[name]
	if !ok {
		return nil, false
	}
	return f.cols[j], true
}

// ColAt returns the values of column j (shared, not copied).
func (f *Frame) ColAt(j int) []float64 { return f.cols[j] }

// Labels returns the labels (shared), or nil when the frame has none.
func (f *Frame) Labels() []uint8 { return f.labels }

// Customers returns the customer id of each row (shared), or nil.
func (f *Frame) Customers() []int32 { return f.customers }

// Days returns the snapshot day number of each row (shared), or nil.
func (f *Frame) Days() []int32 { return f.days }

// HasMissing reports whether column j holds a missing value.
func (f *Frame) HasMissing(j int) bool {
	for _, v := range f.cols[j] {
		if v != v {
			return true
		}
	}
	return false
}

// Subset returns a new frame holding the given rows, in the given order
// (rows may repeat, as in a bootstrap resample). Values are copied: one
// allocation per column and per key slice, none per row.
func (f *Frame) Subset(rows []int) (*Frame, error) {
	for k, i := range rows {
		if i < 0 || i >= f.rows {
			return nil, fmt.Errorf("subset frame: row %d (position %d) out of range [0, %d)", i, k, f.rows)
		}
	}
	cols := make([][]float64, len(f.cols))
	for j, src := range f.cols {
		dst := make([]float64, len(rows))
		for k, i := range rows {
			dst[k] = src[i]
		}
		cols[j] = dst
	}
	var labels []uint8
	if f.labels != nil {
		labels = make([]uint8, len(rows))
		for k, i := range rows {
			labels[k] = f.labels[i]
		}
	}
	gather := func(src []int32) []int32 {
		if src == nil {
			return nil
		}
		dst := make([]int32, len(rows))
		for k, i := range rows {
			dst[k] = src[i]
		}
		return dst
	}
	out := &Frame{
		names:     append([]string(nil), f.names...),
		index:     f.index,
		cols:      cols,
		labels:    labels,
		customers: gather(f.customers),
		days:      gather(f.days),
		rows:      len(rows),
	}
	return out, nil
}

// Select returns a frame with only the named columns, in the given order,
// sharing the column slices and keys with f.
func (f *Frame) Select(names []string) (*Frame, error) {
	cols := make([][]float64, len(names))
	for k, name := range names {
		j, ok := f.index[name]
		if !ok {
			return nil, fmt.Errorf("select columns: no column %q", name)
		}
		cols[k] = f.cols[j]
	}
	out, err := FromColumns(names, cols, f.labels, f.customers, f.days)
	if err != nil {
		return nil, fmt.Errorf("select columns: %w", err)
	}
	out.rows = f.rows
	return out, nil
}
