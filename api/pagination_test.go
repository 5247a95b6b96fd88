package api_test

import (
	"fmt"
	"net/http"
	"net/url"
	"sync"
	"testing"
)

// TestPaginationWhileAdding pages through a list 7 at a time while another
// client keeps adding coupons through HTTP: every row that existed when
// paging began is returned, none twice, and nothing that does not exist.
// New rows sort after the existing ones, so a pager that keeps going sees them too.
func TestPaginationWhileAdding(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		name, list string
		key        string // the field that identifies an item
	}{
		{"Coupons", "/v1/coupons", "id"},
		{"AuditEvents", "/v1/audit/events?entity=coupon", "index"},
	} {
		t.Run(c.name, func(t *testing.T) {
			t.Parallel()
			e := newEnv(t)
			proc := e.procedure()
			for range 30 {
				e.mustCoupon(proc)
			}
			before := listAll(t, e, c.list, c.key, 500)
			if len(before) != 30 {
				t.Fatalf("%s before paging: %d items, want 30", c.list, len(before))
			}
			// The writer adds 20 coupons while the reader pages; the reader
			// waits for the first 3 after its first page, so some rows are
			// certainly added mid-way, and the rest race with the later pages.
			firstThree := make(chan struct{})
			var once sync.Once
			signal := func() { once.Do(func() { close(firstThree) }) }
			written := 0
			var wg sync.WaitGroup
			wg.Add(1)
			start := make(chan struct{})
			go func() {
				defer wg.Done()
				defer signal() // never leave the reader waiting
				<-start
				for i := range 20 {
					if r := e.do(http.MethodPost, "/v1/coupons", "technician", couponBody(proc, "", uniq("C"))); r.status != http.StatusCreated {
						t.Errorf("concurrent POST /v1/coupons = %d %s", r.status, r.body)
						break
					}
					written++
					if i == 2 {
						signal()
					}
				}
			}()
			seen := map[string]int{}
			var order []string
			cursor := ""
			for pages := 0; ; pages++ {
				if pages > 100 {
					t.Fatal("paging does not end")
				}
				r := e.do(http.MethodGet, withQuery(c.list, "limit", "7", "cursor", cursor), "auditor", nil)
				if r.status != http.StatusOK {
					t.Fatalf("page %d: status %d %s", pages, r.status, r.body)
				}
				items := r.items(t)
				if len(items) > 7 {
					t.Fatalf("page %d has %d items, want at most 7", pages, len(items))
				}
				for _, it := range items {
					k := fmt.Sprint(it[c.key])
					seen[k]++
					order = append(order, k)
				}
				if pages == 0 {
					close(start)
					<-firstThree
				}
				next, _ := r.object(t)["next_cursor"].(string)
				if next == "" {
					t.Fatalf("page %d has no next_cursor; every page must carry one", pages)
				}
				if len(items) < 7 { // a short page: the end of what is logged now
					break
				}
				cursor = next
			}
			wg.Wait()
			after := listAll(t, e, c.list, c.key, 500)
			for k, n := range seen {
				if n != 1 {
					t.Errorf("item %s returned %d times, want once", k, n)
				}
				if !after[k] {
					t.Errorf("item %s returned but not in the final list", k)
				}
			}
			for k := range before {
				if seen[k] == 0 {
					t.Errorf("item %s existed before paging began but was not returned", k)
				}
			}
			if len(after) != 30+written {
				t.Errorf("%s after the writer: %d items, want %d", c.list, len(after), 30+written)
			}
			if len(order) < 33 {
				t.Errorf("paging returned %d items, want at least the 30 old and 3 added mid-way", len(order))
			}
			t.Logf("%s: %d items over the pages, %d at the end", c.list, len(order), len(after))
		})
	}
}

// listAll reads every item key of a list, paging with the given size.
func listAll(t *testing.T, e *testEnv, list, key string, size int) map[string]bool {
	t.Helper()
	out := map[string]bool{}
	cursor := ""
	for {
		r := e.do(http.MethodGet, withQuery(list, "limit", fmt.Sprint(size), "cursor", cursor), "auditor", nil)
		items := r.items(t)
		for _, it := range items {
			out[fmt.Sprint(it[key])] = true
		}
		next, _ := r.object(t)["next_cursor"].(string)
		if len(items) < size {
			return out
		}
		if next == "" {
			t.Fatalf("%s: a full page without next_cursor", list)
		}
		cursor = next
	}
}

// withQuery adds name=value pairs (skipping empty values) to a path.
func withQuery(path string, kv ...string) string {
	u, _ := url.Parse(path)
	q := u.Query()
	for i := 0; i+1 < len(kv); i += 2 {
		if kv[i+1] != "" {
			q.Set(kv[i], kv[i+1])
		}
	}
	u.RawQuery = q.Encode()
	return u.String()
}
