package store

import (
	"encoding/json"
	"testing"
)

// attributesJSON must produce what encoding/json decodes back to the same
// values, including quotes, backslashes, control characters and non-ASCII.
func TestAttributesJSON(t *testing.T) {
	names := []string{"channel", "note", "région"}
	values := []string{`say "hi"`, "a\\b\tc\x01", "Île-de-France"}
	got := attributesJSON(names, values)
	var m map[string]string
	if err := json.Unmarshal([]byte(got), &m); err != nil {
		t.Fatalf("attributesJSON = %s: %v", got, err)
	}
	for i, n := range names {
		if m[n] != values[i] {
			t.Errorf("%s = %q, want %q", n, m[n], values[i])
		}
	}
}
