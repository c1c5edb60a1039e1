package web

import "testing"

func TestLRU(t *testing.T) {
	c := newLRU[int, string](2)
	c.put(1, "a")
	c.put(2, "b")
	if v, ok := c.get(1); !ok || v != "a" {
		t.Fatalf("get(1) = %q, %v", v, ok)
	}
	c.put(3, "c") // 2 is the least recently used
	if _, ok := c.get(2); ok {
		t.Error("2 was not evicted")
	}
	for k, want := range map[int]string{1: "a", 3: "c"} {
		if v, ok := c.get(k); !ok || v != want {
			t.Errorf("get(%d) = %q, %v", k, v, ok)
		}
	}
	c.put(3, "d")
	if v, _ := c.get(3); v != "d" {
		t.Errorf("replaced value = %q", v)
	}
}
