package db_test

import (
	"context"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestPageWaitsOnlyWhenPendingCanShow stops the log's sequencer of a
// database of its own with three coupons logged, then writes and pages:
//   - a new coupon, acknowledged but not logged, is given an index after
//     every logged one, so a full page of the logged coupons cannot change
//     by it: that page is answered without waiting, and a following page
//     that reaches the end of what is logged waits for it;
//   - a correction of a listed coupon, or a section of one (its verdict),
//     can change a row already listed: a full page waits for them.
//
// With the sequencer stopped, a page that waits gives up after db.LogWait
// and answers what is logged.
func TestPageWaitsOnlyWhenPendingCanShow(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	dbURL, _, _ := dbtest.Fresh(t)
	s := dbtest.OpenApp(t, dbURL)
	site := dbtest.Site(t)
	// logNow runs the sequencer until every write of the site is logged,
	// then stops it.
	logNow := func() {
		t.Helper()
		seqCtx, stopSequencer := context.WithCancel(ctx)
		stopped := make(chan struct{})
		go func() {
			defer close(stopped)
			_ = s.RunSequencer(seqCtx, db.SequencerOptions{Retry: 100 * time.Millisecond})
		}()
		mustLogged(t, s, site)
		stopSequencer()
		<-stopped
	}
	p := mustProcedure(t, s, site)
	var logged []uuid.UUID
	for _, mark := range []string{"PW-1", "PW-2", "PW-3"} {
		c, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, mark))
		if err != nil {
			t.Fatal(err)
		}
		logged = append(logged, c.ID)
	}
	logNow()

	page := func(cursor string, limit int) db.Page[db.Coupon] {
		t.Helper()
		pg, err := s.Coupons(ctx, site, db.CouponFilter{}, cursor, limit)
		if err != nil {
			t.Fatal(err)
		}
		return pg
	}
	ids := func(pg db.Page[db.Coupon]) []uuid.UUID {
		var out []uuid.UUID
		for _, c := range pg.Items {
			out = append(out, c.ID)
		}
		return out
	}
	waits := func(want int64, what string) {
		t.Helper()
		if got := s.PageWaits(); got != want {
			t.Fatalf("%s: %d pages waited in all, want %d", what, got, want)
		}
	}
	fresh, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, "PW-4"))
	if err != nil {
		t.Fatal(err)
	}
	first := page("", 2)
	if got := ids(first); len(got) != 2 || got[0] != logged[0] || got[1] != logged[1] {
		t.Fatalf("first page = %v, want the first two logged coupons %v", got, logged[:2])
	}
	waits(0, "a full page under a pending new coupon")
	start := time.Now()
	tail := page(first.Next, 2)
	waits(1, "the page at the end of what is logged, a new coupon pending")
	if got := ids(tail); len(got) != 1 || got[0] != logged[2] || time.Since(start) < db.LogWait {
		t.Fatalf("tail page = %v after %v, want %v (the new coupon %v not logged) after the wait", got, time.Since(start), logged[2], fresh.ID)
	}

	// A correction of a listed coupon: its row changes on the first page.
	d := couponData(p.ID, "PW-1")
	d.CurrentA += 5
	if _, err := s.CorrectCoupon(ctx, actor(site), logged[0], db.Change{BaseRevision: 1, Reason: "meter re-read"}, d); err != nil {
		t.Fatal(err)
	}
	page("", 2)
	waits(2, "a full page under a pending correction")

	// A section of a listed coupon: its verdict changes.
	logNow()
	if _, err := s.CreateMeasurement(ctx, actor(site), measurementData(logged[1], "A", "reject")); err != nil {
		t.Fatal(err)
	}
	page("", 2)
	waits(3, "a full page under a pending section")
}
