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
	followEveryRowOnce(t, s, site, "coupon", func(w, i int) (uuid.UUID, bool, error) {
		c, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("C-PGR-%02d-%03d", w, i)))
		return c.ID, true, err
	}, func(cursor string) (db.Page[db.Coupon], error) {
		return s.Coupons(ctx, site, db.CouponFilter{IncludeVoided: true}, cursor, 50)
	}, func(c db.Coupon) uuid.UUID { return c.ID })
}

// TestSectionPagerSeesEveryRowOnce follows the sections list filtered to
// rejected sections while 16 writers add 2,400 sections, every fourth
// rejected: the follower must see every committed rejected section exactly
// once and no accepted one (the list's key, section_list, is written in the
// transaction that gives a leaf its index).
func TestSectionPagerSeesEveryRowOnce(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("2,400 writes")
	}
	s, site := dbtest.Store(t), dbtest.Site(t)
	ctx := context.Background()
	p := mustProcedure(t, s, site)
	couponOf := make([]uuid.UUID, pagerWriters)
	for w := range couponOf {
		c, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("C-SPG-%02d", w)))
		if err != nil {
			t.Fatal(err)
		}
		couponOf[w] = c.ID
	}
	followEveryRowOnce(t, s, site, "measurement", func(w, i int) (uuid.UUID, bool, error) {
		acceptance := "accept"
		if i%4 == 0 {
			acceptance = "reject"
		}
		m, err := s.CreateMeasurement(ctx, actor(site), measurementData(couponOf[w], fmt.Sprintf("S%03d", i), acceptance))
		return m.ID, acceptance == "reject", err
	}, func(cursor string) (db.Page[db.Measurement], error) {
		return s.Measurements(ctx, site, db.MeasurementFilter{Acceptance: "reject"}, cursor, 50)
	}, func(m db.Measurement) uuid.UUID { return m.ID })
}

// TestProductionPagerSeesEveryRowOnce follows the production records list
// filtered to one welder while 16 writers add 2,400 records, every fourth
// by that welder, each a batch of its own: the follower must see every
// committed record of the welder exactly once and no other (the list's key,
// production_list, is written in the transaction that gives a leaf its
// index, from the columns the write left for it).
func TestProductionPagerSeesEveryRowOnce(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("2,400 writes")
	}
	s, site := dbtest.Store(t), dbtest.Site(t)
	ctx := context.Background()
	p := mustProcedure(t, s, site)
	followEveryRowOnce(t, s, site, "production_record", func(w, i int) (uuid.UUID, bool, error) {
		r := productionRow(p.ID, fmt.Sprintf("PPG-%02d-%03d", w, i), 200)
		if i%4 != 0 {
			r.WelderID = fmt.Sprintf("WP-%d", w)
		}
		recs, err := s.CreateProductionRecords(ctx, actor(site), []db.ProductionRecordData{r})
		if err != nil {
			return uuid.Nil, false, err
		}
		return recs[0].ID, r.WelderID == "W-11", nil
	}, func(cursor string) (db.Page[db.ProductionRecord], error) {
		return s.ProductionRecords(ctx, site, db.ProductionRecordFilter{WelderID: "W-11"}, cursor, 50)
	}, func(r db.ProductionRecord) uuid.UUID { return r.ID })
}

// pagerWriters write pagerEach records each in the pager tests.
const pagerWriters, pagerEach = 16, 150

// followEveryRowOnce runs pagerWriters writers calling write(w, i) for i <
// pagerEach (it returns the record's id and whether the followed list shows
// it) while one follower pages the list with page from the start, and fails
// unless the follower saw every listed record (by id) exactly once and nothing
// else, with a cursor on every page. It logs the sequencer's commit-to-index
// lag for kind and the write-to-list visibility.
func followEveryRowOnce[T any](t *testing.T, s *db.Store, site, kind string, write func(w, i int) (uuid.UUID, bool, error),
	page func(cursor string) (db.Page[T], error), id func(T) uuid.UUID) {
	t.Helper()
	ctx := context.Background()
	var mu sync.Mutex
	acked := map[uuid.UUID]time.Time{} // the records the list shows
	unlisted := map[uuid.UUID]bool{}   // the records it must not show
	var wg sync.WaitGroup
	for w := range pagerWriters {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range pagerEach {
				id, listed, err := write(w, i)
				if err != nil {
					t.Error(err)
					return
				}
				now := time.Now()
				mu.Lock()
				if listed {
					acked[id] = now
				} else {
					unlisted[id] = true
				}
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
		pg, err := page(cursor)
		if err != nil {
			t.Fatal(err)
		}
		ids, next := make([]uuid.UUID, len(pg.Items)), pg.Next
		for i, it := range pg.Items {
			ids[i] = id(it)
		}
		if next == "" {
			t.Fatalf("page %d has no cursor", pages)
		}
		if len(ids) == 0 && cursor != "" && next != cursor {
			t.Fatalf("an empty page returned cursor %q, want the one it was asked with (%q)", next, cursor)
		}
		now := time.Now()
		for _, id := range ids {
			seen[id]++
			mu.Lock()
			if at, ok := acked[id]; ok && seen[id] == 1 {
				delays = append(delays, now.Sub(at))
			}
			mu.Unlock()
		}
		cursor = next
		if finished && len(ids) == 0 {
			break
		}
		if len(ids) < 50 {
			time.Sleep(time.Millisecond)
		}
	}
	if t.Failed() {
		return
	}
	if len(acked)+len(unlisted) != pagerWriters*pagerEach {
		t.Fatalf("%d records acknowledged, want %d", len(acked)+len(unlisted), pagerWriters*pagerEach)
	}
	missed, repeated, wrong := 0, 0, 0
	for id := range acked {
		switch seen[id] {
		case 0:
			missed++
		case 1:
		default:
			repeated++
		}
	}
	for id := range seen {
		if unlisted[id] {
			wrong++
		}
	}
	if missed != 0 || repeated != 0 || wrong != 0 || len(seen) != len(acked) {
		t.Errorf("follower saw %d distinct records of %d: %d missed, %d repeated, %d outside the filter", len(seen), len(acked), missed, repeated, wrong)
	}
	var p50, p99, maxLag float64
	var batches int
	if err := s.Pool().QueryRow(ctx, `SELECT percentile_cont(0.5) WITHIN GROUP (ORDER BY lag), percentile_cont(0.99) WITHIN GROUP (ORDER BY lag), max(lag),
			(SELECT count(*) FROM log_checkpoints WHERE site = $1)
		FROM (SELECT extract(epoch FROM integrated_at - at) AS lag FROM log_leaves WHERE site = $1 AND kind = $2) l`, site, kind).Scan(&p50, &p99, &maxLag, &batches); err == nil {
		t.Logf("sequencer: commit-to-index p50 %.1f ms, p99 %.1f ms, max %.1f ms, %d batches", 1000*p50, 1000*p99, 1000*maxLag, batches)
	}
	slices.Sort(delays)
	if len(delays) > 0 {
		t.Logf("write-to-list visibility over %d records seen while writing: p50 %v, p99 %v, max %v", len(delays),
			delays[len(delays)/2], delays[len(delays)*99/100], delays[len(delays)-1])
	}
}
