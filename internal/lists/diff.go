package lists

import "slices"

// Diff compares the customer keys of the previous list with the current
// one, as sets (repeats count once): added are on the current list only,
// kept on both, left on the previous list only. Each result is sorted.
func Diff(prev, cur []string) (added, kept, left []string) {
	p := slices.Compact(slices.Sorted(slices.Values(prev)))
	c := slices.Compact(slices.Sorted(slices.Values(cur)))
	i, j := 0, 0
	for i < len(p) && j < len(c) {
		switch {
		case p[i] < c[j]:
			left = append(left, p[i])
			i++
		case p[i] > c[j]:
			added = append(added, c[j])
			j++
		default:
			kept = append(kept, c[j])
			i++
			j++
		}
	}
	left = append(left, p[i:]...)
	added = append(added, c[j:]...)
	return added, kept, left
}
