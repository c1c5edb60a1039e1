package jobs_test

import (
	"math"
	"testing"

	"ebb/internal/jobs"
)

func TestProgressSet(t *testing.T) {
	type set struct {
		pct float64
		msg string
	}
	tests := []struct {
		name    string
		sets    []set
		wantPct float64
		wantMsg string
	}{
		{"nothing set", nil, 0, ""},
		{"one set", []set{{12.5, "reading orders"}}, 12.5, "reading orders"},
		{"rises", []set{{10, "a"}, {20, "b"}, {30, "c"}}, 30, "c"},
		{"never goes back", []set{{60, "writing"}, {20, "checking"}}, 60, "checking"},
		{"clamped above", []set{{250, "x"}}, 100, "x"},
		{"clamped below", []set{{-5, "starting"}}, 0, "starting"},
		{"NaN keeps the percentage", []set{{40, "a"}, {math.NaN(), "b"}}, 40, "b"},
		{"infinity is 100", []set{{math.Inf(1), ""}}, 100, ""},
		{"empty message keeps the last", []set{{10, "reading"}, {20, ""}}, 20, "reading"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var p jobs.Progress
			for _, s := range tt.sets {
				p.Set(s.pct, s.msg)
			}
			if pct, msg := p.Get(); pct != tt.wantPct || msg != tt.wantMsg {
				t.Errorf("Get() = %v, %q; want %v, %q", pct, msg, tt.wantPct, tt.wantMsg)
			}
		})
	}
}

// A Func called outside a Runner may be handed a nil *Progress.
func TestNilProgress(t *testing.T) {
	var p *jobs.Progress
	p.Set(50, "ignored")
	if pct, msg := p.Get(); pct != 0 || msg != "" {
		t.Errorf("nil Progress Get() = %v, %q; want 0, \"\"", pct, msg)
	}
}

func BenchmarkProgressSet(b *testing.B) {
	var p jobs.Progress
	i := 0
	for b.Loop() {
		i++
		p.Set(float64(i%100), "reading orders")
	}
}
