package outcomes

import "testing"

func TestWords(t *testing.T) {
	tests := []struct{ name, got, want string }{
		{"pct 0", pct(0), "0%"},
		{"pct tiny", pct(0.004), "under 1%"},
		{"pct rounds", pct(0.706), "71%"},
		{"pct near 1", pct(0.996), "over 99%"},
		{"pct 1", pct(1), "100%"},
		{"percent", percent(287, 412), "70%"},
		{"points negative", points(-0.0612), "6.1"},
		{"points positive", points(0.1034), "10.3"},
		{"count small", count(412), "412"},
		{"count thousands", count(1234567), "1,234,567"},
		{"count negative", count(-12345), "-12,345"},
		{"customers one", customers(1), "1 customer"},
		{"customers many", customers(12345), "12,345 customers"},
	}
	for _, tt := range tests {
		if tt.got != tt.want {
			t.Errorf("%s = %q, want %q", tt.name, tt.got, tt.want)
		}
	}
}
