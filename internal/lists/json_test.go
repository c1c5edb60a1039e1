package lists

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"
)

// jsonList is the documented shape of a JSON list, for decoding in tests.
type jsonList struct {
	ListDate       string   `json:"list_date"`
	AttributeNames []string `json:"attribute_names"`
	Rows           []struct {
		CustomerID  string            `json:"customer_id"`
		Email       string            `json:"email"`
		Probability float64           `json:"probability"`
		Band        string            `json:"band"`
		Reasons     string            `json:"reasons"`
		Attributes  map[string]string `json:"attributes"`
	} `json:"rows"`
}

func writeTestJSON(t *testing.T, rows []Row) []byte {
	t.Helper()
	var buf bytes.Buffer
	w, err := NewJSONWriter(&buf, testDate, testAttrNames)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range rows {
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func TestWriteJSONGolden(t *testing.T) {
	checkGolden(t, "list.json.golden", writeTestJSON(t, testRows))
}

// The document decodes with encoding/json to the rows as written: strings
// unchanged (no spreadsheet guard in JSON), probabilities to 4 decimals.
func TestWriteJSONDecodes(t *testing.T) {
	rows := append(testRows[:len(testRows):len(testRows)], Row{
		Key: "ctl\x01\x1f", Email: "sep\u2028\u2029", Probability: 0.25, Band: Medium,
		Reasons: "back\\slash \"q\" <b>&", ListDate: testDate, Attrs: []string{"é", "😀"},
	})
	var doc jsonList
	if err := json.Unmarshal(writeTestJSON(t, rows), &doc); err != nil {
		t.Fatal(err)
	}
	if doc.ListDate != "2026-03-02" || len(doc.AttributeNames) != 2 || doc.AttributeNames[1] != "=plan" {
		t.Errorf("head = %q, %q", doc.ListDate, doc.AttributeNames)
	}
	if len(doc.Rows) != len(rows) {
		t.Fatalf("decoded %d rows, want %d", len(doc.Rows), len(rows))
	}
	probs := []float64{0.8123, 0.5, 1, 0, 0.0001, 0.25}
	for i, r := range rows {
		got := doc.Rows[i]
		if got.CustomerID != r.Key || got.Email != r.Email || got.Reasons != r.Reasons || got.Band != string(r.Band) || got.Probability != probs[i] {
			t.Errorf("row %d = %+v, want %+v", i, got, r)
		}
		for k, name := range testAttrNames {
			if got.Attributes[name] != r.Attrs[k] {
				t.Errorf("row %d attribute %q = %q, want %q", i, name, got.Attributes[name], r.Attrs[k])
			}
		}
	}
}

func TestAppendJSONStringInvalidUTF8(t *testing.T) {
	var s string
	if err := json.Unmarshal(appendJSONString(nil, "a\xffb\xc3"), &s); err != nil {
		t.Fatal(err)
	}
	if s != "a\ufffdb\ufffd" {
		t.Errorf("decoded %q, want invalid bytes as U+FFFD", s)
	}
}

func TestWriteJSONEmpty(t *testing.T) {
	out := writeTestJSON(t, nil)
	var doc jsonList
	if err := json.Unmarshal(out, &doc); err != nil {
		t.Fatalf("empty list %q: %v", out, err)
	}
	if doc.Rows == nil || len(doc.Rows) != 0 {
		t.Errorf("empty list decoded rows %v, want []", doc.Rows)
	}
}

func TestJSONWriterErrors(t *testing.T) {
	w, err := NewJSONWriter(&bytes.Buffer{}, testDate, []string{"region"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.Write(Row{Key: "a", Probability: 0.5, ListDate: testDate + 7, Attrs: []string{"x"}}); err == nil || !strings.Contains(err.Error(), "2026-03-09") {
		t.Errorf("Write with another list date = %v, want an error naming it", err)
	}
	if err := w.Write(Row{Key: "a", Probability: 0.5, ListDate: testDate}); err == nil {
		t.Error("Write without attributes succeeded, want an error")
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	if err := w.Write(Row{Key: "a", Probability: 0.5, ListDate: testDate, Attrs: []string{"x"}}); err == nil {
		t.Error("Write after Close succeeded, want an error")
	}
	if _, err := NewJSONWriter(&bytes.Buffer{}, testDate, []string{"a", "a"}); err == nil {
		t.Error("NewJSONWriter with a repeated attribute name succeeded, want an error")
	}
}
