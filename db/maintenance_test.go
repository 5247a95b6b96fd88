package db_test

import (
	"context"
	"fmt"
	"slices"
	"testing"
	"time"

	"etchlog/db/dbtest"
)

// TestStatisticsKept reads the server's own setting (SHOW autovacuum, as
// psql would) and checks the Store reports it.
func TestStatisticsKept(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	var on string
	if err := dbtest.Conn(t).QueryRow(ctx, "SHOW autovacuum").Scan(&on); err != nil {
		t.Fatal(err)
	}
	kept, err := dbtest.Store(t).StatisticsKept(ctx)
	if err != nil || kept != (on == "on") {
		t.Errorf("StatisticsKept = %v, %v; the server's autovacuum is %q", kept, err, on)
	}
}

// TestAnalyzeStale: after a few hundred coupons, the tables they went into
// are stale by autovacuum's default rule (PostgreSQL documentation,
// "The Autovacuum Daemon": analyze when the rows changed since the last
// analysis exceed autovacuum_analyze_threshold + autovacuum_analyze_scale_factor
// × the rows, 50 + 0.1 × rows by default); the service's login analyses
// them through etchlog_analyze, the server records it, and a table that is
// not the owner's is refused.
func TestAnalyzeStale(t *testing.T) {
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	start := time.Now()
	for i := range 300 {
		if _, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("ST-%03d", i))); err != nil {
			t.Fatal(err)
		}
	}
	mustLogged(t, s, site)
	conn := dbtest.Conn(t)
	analysed := func(table string) bool {
		var at *time.Time
		if err := conn.QueryRow(ctx, `SELECT last_analyze FROM pg_stat_user_tables WHERE relid = $1::regclass`, table).Scan(&at); err != nil {
			t.Fatal(err)
		}
		return at != nil && at.After(start)
	}
	// The server's counters lag by about a second: ask until they show.
	var all []string
	for deadline := time.Now().Add(20 * time.Second); !(analysed("coupons") && analysed("coupon_list")); {
		if time.Now().After(deadline) {
			t.Fatalf("coupons and coupon_list not analysed after 300 coupons; AnalyzeStale answered %q", all)
		}
		tables, err := s.AnalyzeStale(ctx)
		if err != nil {
			t.Fatal(err)
		}
		all = append(all, tables...)
		time.Sleep(200 * time.Millisecond)
	}
	if !slices.Contains(all, "coupons") || !slices.Contains(all, "coupon_list") {
		t.Errorf("AnalyzeStale answered %q, want coupons and coupon_list among them", all)
	}
	if _, err := s.Pool().Exec(ctx, `SELECT etchlog_analyze('pg_catalog.pg_class'::regclass)`); err == nil {
		t.Error("etchlog_analyze(pg_class) ran; want a refusal: not a table of etchlog's owner")
	}
}
