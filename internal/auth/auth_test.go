package auth

import (
	"bytes"
	"testing"
	"time"

	"ebb/internal/problem"
)

func TestRoles(t *testing.T) {
	tests := []struct {
		have, need Role
		want       bool
	}{
		{Viewer, Viewer, true}, {Viewer, Analyst, false}, {Viewer, Admin, false},
		{Analyst, Viewer, true}, {Analyst, Analyst, true}, {Analyst, Admin, false},
		{Admin, Viewer, true}, {Admin, Analyst, true}, {Admin, Admin, true},
	}
	for _, tt := range tests {
		if got := tt.have.Allows(tt.need); got != tt.want {
			t.Errorf("%s.Allows(%s) = %v, want %v", tt.have, tt.need, got, tt.want)
		}
	}
	for _, r := range Roles {
		if got, err := ParseRole(r.String()); err != nil || got != r {
			t.Errorf("ParseRole(%q) = %v, %v", r.String(), got, err)
		}
	}
	if _, err := ParseRole("root"); !problem.Is(err, problem.Invalid) {
		t.Errorf("ParseRole(root) error = %v, want Invalid", err)
	}
}

func TestNamesAndPasswords(t *testing.T) {
	for name, ok := range map[string]bool{"ana.lyst@shop": true, "x": true, "": false, "has space": false, "<b>": false, string(bytes.Repeat([]byte("a"), 65)): false} {
		if err := CheckName(name); (err == nil) != ok {
			t.Errorf("CheckName(%q) = %v, want ok=%v", name, err, ok)
		}
	}
	for pw, ok := range map[string]bool{"123456789": false, "1234567890": true, string(bytes.Repeat([]byte("a"), 72)): true, string(bytes.Repeat([]byte("a"), 73)): false} {
		if err := CheckPassword(pw); (err == nil) != ok {
			t.Errorf("CheckPassword(len %d) = %v, want ok=%v", len(pw), err, ok)
		}
	}
	h := Hasher{Cost: 4}
	hash, err := h.Hash("a long enough secret")
	if err != nil || !h.Matches(hash, "a long enough secret") || h.Matches(hash, "a long enough secreT") {
		t.Errorf("Hash/Matches round trip failed: %v", err)
	}
	if a, b := NewPassword(), NewPassword(); len(a) != 16 || a == b {
		t.Errorf("NewPassword = %q, %q", a, b)
	}
}

func TestKeysAndDemoPasswords(t *testing.T) {
	for hexKey, ok := range map[string]bool{
		string(bytes.Repeat([]byte("ab"), 32)): true, string(bytes.Repeat([]byte("ab"), 64)): true,
		string(bytes.Repeat([]byte("ab"), 16)): false, "xyz": false,
	} {
		if _, err := ParseKey(hexKey); (err == nil) != ok {
			t.Errorf("ParseKey(len %d) = %v, want ok=%v", len(hexKey), err, ok)
		}
	}
	if _, err := NewSessions(nil, make([]byte, 20), time.Now); err == nil {
		t.Error("NewSessions accepted a 20-byte key")
	}
	k1, k2 := bytes.Repeat([]byte{1}, 32), bytes.Repeat([]byte{2}, 32)
	if DemoPassword(k1, "demo-analyst") != DemoPassword(k1, "demo-analyst") ||
		DemoPassword(k1, "demo-analyst") == DemoPassword(k2, "demo-analyst") ||
		DemoPassword(k1, "demo-analyst") == DemoPassword(k1, "demo-viewer") ||
		CheckPassword(DemoPassword(k1, "demo-analyst")) != nil {
		t.Error("demo passwords must be stable per key, differ by key and name, and be valid passwords")
	}
}

func TestThrottle(t *testing.T) {
	now := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	th := NewThrottle(func() time.Time { return now })
	for i := 0; i < 5; i++ {
		if _, blocked := th.Blocked("Ana", "10.0.0.1"); blocked {
			t.Fatalf("blocked after %d failures", i)
		}
		th.Fail("ana", "10.0.0.1")
	}
	if wait, blocked := th.Blocked("ANA", "10.0.0.9"); !blocked || wait != 15*time.Minute {
		t.Errorf("account: Blocked = %v, %v; want 15m, true (names compare without case)", wait, blocked)
	}
	now = now.Add(10 * time.Minute)
	if wait, _ := th.Blocked("ana", "x"); wait != 5*time.Minute {
		t.Errorf("after 10 minutes wait = %v, want 5m", wait)
	}
	// 20 failures from one address over many names block that address.
	for i := 0; i < 20; i++ {
		th.Fail(string(rune('a'+i))+"-user", "10.0.0.2")
	}
	if _, blocked := th.Blocked("fresh", "10.0.0.2"); !blocked {
		t.Error("address not blocked after 20 failures")
	}
	th.Succeed("ana")
	if _, blocked := th.Blocked("ana", "10.0.0.3"); blocked {
		t.Error("a good sign-in did not clear the account's failures")
	}
}
