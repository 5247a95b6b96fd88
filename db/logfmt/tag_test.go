package logfmt

import (
	"bytes"
	"crypto/hmac"
	"crypto/sha256"
	"sync"
	"testing"
)

// TestTagIsHMACOfSiteAndLeaf checks a pending leaf's tag against Go's
// crypto/hmac (the reference implementation of HMAC-SHA-256, RFC 2104)
// computed afresh over site || 0x00 || leaf hash with the signer's tag key
// (and an entry of many leaves' tag, over site || 0x00 "many" 0x00 || digest),
// also when Tag reuses its pooled states: calls in turn for other sites and
// leaves, and from many goroutines at once.
func TestTagIsHMACOfSiteAndLeaf(t *testing.T) {
	skey, _, err := GenerateKey("tag-test")
	if err != nil {
		t.Fatal(err)
	}
	s, err := NewSigner(skey)
	if err != nil {
		t.Fatal(err)
	}
	hmacOf := func(site, marker string, data []byte) []byte {
		h := hmac.New(sha256.New, s.mac)
		h.Write([]byte(site))
		h.Write([]byte(marker))
		h.Write(data)
		return h.Sum(nil)
	}
	want := func(site string, leaf []byte) []byte { return hmacOf(site, "\x00", leaf) }
	leaf := func(i int) []byte { return bytes.Repeat([]byte{byte(i)}, 32) }
	sites := []string{"north-bay", "", "yard 2"}
	for round := 0; round < 3; round++ { // later rounds take states back from the pool
		for i, site := range sites {
			if got := s.Tag(site, leaf(i)); !bytes.Equal(got, want(site, leaf(i))) {
				t.Fatalf("round %d: Tag(%q, leaf %d) = %x, HMAC-SHA-256 %x", round, site, i, got, want(site, leaf(i)))
			}
			if !s.TagOK(site, leaf(i), want(site, leaf(i))) {
				t.Fatalf("round %d: TagOK refuses the HMAC of %q, leaf %d", round, site, i)
			}
			if s.TagOK(site, leaf(i+1), want(site, leaf(i))) {
				t.Fatalf("round %d: TagOK takes the tag of another leaf", round)
			}
			// An entry of many leaves: the same key and states, its own marker.
			if got, w := s.TagMany(site, leaf(i)), hmacOf(site, "\x00many\x00", leaf(i)); !bytes.Equal(got, w) {
				t.Fatalf("round %d: TagMany(%q, digest %d) = %x, HMAC-SHA-256 %x", round, site, i, got, w)
			}
			if s.TagManyOK(site, leaf(i), want(site, leaf(i))) {
				t.Fatalf("round %d: TagManyOK takes a single leaf's tag", round)
			}
		}
	}
	var wg sync.WaitGroup
	for g := 0; g < 8; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := 0; i < 200; i++ {
				site := sites[(g+i)%len(sites)]
				if got := s.Tag(site, leaf(i)); !bytes.Equal(got, want(site, leaf(i))) {
					t.Errorf("goroutine %d: Tag(%q, leaf %d) differs from HMAC-SHA-256", g, site, i)
					return
				}
			}
		}()
	}
	wg.Wait()
}
