package analysis

import (
	"strings"
	"testing"
)

func TestLevelsOf(t *testing.T) {
	// 40 "search", 35 "social", 5 "referral", 3 "fair", 2 unset.
	var values []string
	add := func(v string, n int) {
		for i := 0; i < n; i++ {
			values = append(values, v)
		}
	}
	add("search", 40)
	add("social", 35)
	add("referral", 5)
	add("fair", 3)
	add("", 2)
	split, level := levelsOf("channel", values)
	if got := strings.Join(split.Levels, ","); got != "search,social,other" {
		t.Errorf("levels = %s, want search,social,other (fewer than 30 pooled)", got)
	}
	if got := split.Customers; len(got) != 3 || got[0] != 40 || got[1] != 35 || got[2] != 8 {
		t.Errorf("customers per level = %v, want [40 35 8]", got)
	}
	if level[0] != 0 || level[40] != 1 || level[75] != 2 || level[80] != 2 || level[83] != -1 {
		t.Errorf("levels of customers = %d %d %d %d %d", level[0], level[40], level[75], level[80], level[83])
	}
}
