package db_test

import (
	"context"
	"fmt"
	"slices"
	"sync"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestPagerSeesEveryRowOnce follows a coupon list by its cursor while 16
// writers add 2,400 coupons: the follower must see every committed coupon
// exactly once, with no gap and no repeat, although the writers commit out
// of order. Every page, the last and empty ones included, carries a cursor,
// and an empty page hands back the cursor it was asked with. It logs how
// long a coupon took from its acknowledged write to its first appearance in
// the list (p50, p99), the figure the README quotes.
func TestPagerSeesEveryRowOnce(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("2,400 writes")
	}
	s, site := dbtest.Store(t), dbtest.Site(t)
	ctx := context.Background()
	p := mustProcedure(t, s, site)
	const writers, each = 16, 150
	var mu sync.Mutex
	acked := map[uuid.UUID]time.Time{}
	var wg sync.WaitGroup
	for w := range writers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range each {
				c, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("C-PGR-%02d-%03d", w, i)))
				if err != nil {
					t.Error(err)
					return
				}
				now := time.Now()
				mu.Lock()
				acked[c.ID] = now
				mu.Unlock()
			}
		}()
	}
	done := make(chan struct{})
	go func() { wg.Wait(); close(done) }()

	seen := map[uuid.UUID]int{}
	var delays []time.Duration
	cursor, finished := "", false
	for pages := 0; ; pages++ {
		if !finished {
			select {
			case <-done: // every write is acknowledged; let the log catch up, then drain
				finished = true
				mustLogged(t, s, site)
			default:
			}
		}
		pg, err := s.Coupons(ctx, site, db.CouponFilter{IncludeVoided: true}, cursor, 50)
		if err != nil {
			t.Fatal(err)
		}
		if pg.Next == "" {
			t.Fatalf("page %d has no cursor", pages)
		}
		if len(pg.Items) == 0 && cursor != "" && pg.Next != cursor {
			t.Fatalf("an empty page returned cursor %q, want the one it was asked with (%q)", pg.Next, cursor)
		}
		now := time.Now()
		for _, c := range pg.Items {
			seen[c.ID]++
			mu.Lock()
			if at, ok := acked[c.ID]; ok && seen[c.ID] == 1 {
				delays = append(delays, now.Sub(at))
			}
			mu.Unlock()
		}
		cursor = pg.Next
		if finished && len(pg.Items) == 0 {
			break
		}
		if len(pg.Items) < 50 {
			time.Sleep(time.Millisecond)
		}
	}
	if t.Failed() {
		return
	}
	if len(acked) != writers*each {
		t.Fatalf("%d coupons acknowledged, want %d", len(acked), writers*each)
	}
	missed, repeated := 0, 0
	for id := range acked {
		switch seen[id] {
		case 0:
			missed++
		case 1:
		default:
			repeated++
		}
	}
	if missed != 0 || repeated != 0 || len(seen) != len(acked) {
		t.Errorf("follower saw %d distinct coupons of %d: %d missed, %d repeated", len(seen), len(acked), missed, repeated)
	}
	var p50, p99, maxLag float64
	var batches int
	if err := s.Pool().QueryRow(ctx, `SELECT percentile_cont(0.5) WITHIN GROUP (ORDER BY lag), percentile_cont(0.99) WITHIN GROUP (ORDER BY lag), max(lag),
			(SELECT count(*) FROM log_checkpoints WHERE site = $1)
		FROM (SELECT extract(epoch FROM integrated_at - at) AS lag FROM log_leaves WHERE site = $1 AND kind = 'coupon') l`, site).Scan(&p50, &p99, &maxLag, &batches); err == nil {
		t.Logf("sequencer: commit-to-index p50 %.1f ms, p99 %.1f ms, max %.1f ms, %d batches", 1000*p50, 1000*p99, 1000*maxLag, batches)
	}
	slices.Sort(delays)
	if len(delays) > 0 {
		t.Logf("write-to-list visibility over %d coupons seen while writing: p50 %v, p99 %v, max %v", len(delays),
			delays[len(delays)/2], delays[len(delays)*99/100], delays[len(delays)-1])
	}
}
