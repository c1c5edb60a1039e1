// Package views holds ebb's templ components and the plain-Go format
// helpers they use. Components take view structs the handlers build; they
// run no queries and apply no business rules.
package views

import (
	"net/url"
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

func userAction(id int64, action string) string {
	return "/admin/users/" + strconv.FormatInt(id, 10) + "/" + action
}

func datasetURL(id int64) string { return "/datasets/" + strconv.FormatInt(id, 10) }

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

func appendURL(dataset string) string { return "/uploads/new?append=" + url.QueryEscape(dataset) }

func jobURL(id int64) string { return "/jobs/" + strconv.FormatInt(id, 10) }

// Percent formats a share (0–1) as a whole percentage, or with one decimal
// below 10%.
func Percent(x float64) string {
	p := 100 * x
	if p < 10 && p != 0 {
		return strconv.FormatFloat(p, 'f', 1, 64) + "%"
	}
	return strconv.FormatFloat(p, 'f', 0, 64) + "%"
}

// Bytes formats a size in bytes with binary units: 1 GiB, 512 MiB.
func Bytes(n int64) string {
	units := []string{"bytes", "KiB", "MiB", "GiB", "TiB"}
	f, i := float64(n), 0
	for f >= 1024 && i < len(units)-1 {
		f /= 1024
		i++
	}
	if f == float64(int64(f)) {
		return strconv.FormatInt(int64(f), 10) + " " + units[i]
	}
	return strconv.FormatFloat(f, 'f', 1, 64) + " " + units[i]
}

func tokenRevokeURL(id int64) string { return "/admin/tokens/" + strconv.FormatInt(id, 10) + "/revoke" }
