// Package views holds ebb's templ components and the plain-Go format
// helpers they use. Components take view structs the handlers build; they
// run no queries and apply no business rules.
package views

import (
	"strconv"
	"strings"
)

// Count formats a whole number with thin thousands separators: 1 234 567.
func Count(n int) string {
	s := strconv.Itoa(n)
	neg := strings.HasPrefix(s, "-")
	if neg {
		s = s[1:]
	}
	var b strings.Builder
	if neg {
		b.WriteByte('-')
	}
	for i, c := range s {
		if i > 0 && (len(s)-i)%3 == 0 {
			b.WriteString("\u202f")
		}
		b.WriteRune(c)
	}
	return b.String()
}
