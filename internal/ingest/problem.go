package ingest

import (
	"fmt"
	"strings"

	"ebb/internal/problem"
)

// Problem is one thing wrong with an input file, at a line (1-based, counting
// physical lines including the header) and a column (1-based field number;
// 0 when it concerns the whole line).
type Problem struct {
	File    string
	Line    int
	Col     int
	Column  string // the header name of the column, if known
	Message string
}

// String formats the problem as FILE:LINE:COL: [column NAME:] message.
func (p Problem) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s:%d:%d: ", p.File, p.Line, p.Col)
	if p.Column != "" {
		fmt.Fprintf(&b, "column %s: ", p.Column)
	}
	b.WriteString(p.Message)
	return b.String()
}

// Rejected is the error for a file that was not imported. Problems holds the
// first MaxShown problems and Count all of them.
type Rejected struct {
	File     string
	Problems []Problem
	Count    int
	Summary  string // an overall reason, when there is one beyond the problems
}

func (r *Rejected) Error() string {
	return r.Message()
}

// Message is the one-line, user-safe summary.
func (r *Rejected) Message() string {
	s := fmt.Sprintf("%s was not imported: %d problem", r.File, r.Count)
	if r.Count != 1 {
		s += "s"
	}
	if r.Summary != "" {
		s += "; " + r.Summary
	}
	if r.Count > len(r.Problems) {
		s += fmt.Sprintf(" (the first %d are listed)", len(r.Problems))
	}
	return s
}

// Unwrap lets web and cmd treat a rejection as an Invalid problem.
func (r *Rejected) Unwrap() error {
	return &problem.Error{Kind: problem.Invalid, Message: r.Message()}
}
