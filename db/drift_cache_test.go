package db

import (
	"testing"

	"github.com/google/uuid"
)

// TestFittedCacheKeepsRecentlyUsed checks the cache of fitted sets: a hit
// returns the stored set, the least recently used entry goes first when
// full, and a site is part of the key.
func TestFittedCacheKeepsRecentlyUsed(t *testing.T) {
	c := &fittedCache{max: 2}
	a, b, d := uuid.New(), uuid.New(), uuid.New()
	c.put("s", a, map[uuid.UUID]bool{a: true})
	c.put("s", b, map[uuid.UUID]bool{b: true})
	if got := c.get("s", a); !got[a] { // a is now the most recently used
		t.Fatalf("get a = %v", got)
	}
	c.put("s", d, map[uuid.UUID]bool{d: true}) // evicts b
	if c.get("s", b) != nil {
		t.Fatal("b should have been evicted")
	}
	if !c.get("s", a)[a] || !c.get("s", d)[d] {
		t.Fatal("a and d should be kept")
	}
	if c.get("other", a) != nil {
		t.Fatal("another site must not see a's set")
	}
}
