package lists

import (
	"slices"
	"testing"
)

func TestDiff(t *testing.T) {
	tests := []struct {
		name              string
		prev, cur         []string
		added, kept, left []string
	}{
		{"both empty", nil, nil, nil, nil, nil},
		{"first list", nil, []string{"b", "a"}, []string{"a", "b"}, nil, nil},
		{"list emptied", []string{"b", "a"}, nil, nil, nil, []string{"a", "b"}},
		{"mixed", []string{"c", "a", "d"}, []string{"e", "a", "b", "d"}, []string{"b", "e"}, []string{"a", "d"}, []string{"c"}},
		{"repeats count once", []string{"a", "a", "b"}, []string{"b", "b", "c"}, []string{"c"}, []string{"b"}, []string{"a"}},
		{"same", []string{"x", "y"}, []string{"y", "x"}, nil, []string{"x", "y"}, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			added, kept, left := Diff(tt.prev, tt.cur)
			if !slices.Equal(added, tt.added) || !slices.Equal(kept, tt.kept) || !slices.Equal(left, tt.left) {
				t.Errorf("Diff(%q, %q) = %q, %q, %q, want %q, %q, %q", tt.prev, tt.cur, added, kept, left, tt.added, tt.kept, tt.left)
			}
		})
	}
}

func TestDiffLeavesInputsAlone(t *testing.T) {
	prev := []string{"b", "a"}
	cur := []string{"c", "b"}
	Diff(prev, cur)
	if !slices.Equal(prev, []string{"b", "a"}) || !slices.Equal(cur, []string{"c", "b"}) {
		t.Errorf("Diff reordered its inputs: %q, %q", prev, cur)
	}
}
