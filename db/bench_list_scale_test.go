package db_test

import (
	"context"
	"fmt"
	"slices"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// BenchmarkCouponListScale pages the coupons list of one site holding
// ETCHLOG_BENCH_LIST_COUPONS coupons (default 100,000; 1000000 for the
// million), seeded with COPY like BenchmarkCouponListFiltered, with each
// kind of filter the list offers, on the first page and deep in the log.
// Every case runs side by side with a raw SELECT of a 50-row page of the
// same filter and columns from coupons through the same pool:
//   - clients=1: Store and raw calls alternate; it reports each one's p95
//     latency and x-of-raw, the raw time over the Store time;
//   - clients=8: eight goroutines call the Store, then eight the raw
//     SELECT, in turns of listRound calls, b.N calls in all each; x-of-raw
//     is the Store's throughput over the raw SELECT's.
//
// Both sides' connections are warmed alike before each (dbtest.Warm).
func BenchmarkCouponListScale(b *testing.B) {
	n := envInt(b, "ETCHLOG_BENCH_LIST_COUPONS", 100000)
	ctx := context.Background()
	dbURL, conn, proc := benchSite(b, n)
	const site = "bench"
	if err := fillCouponList(ctx, conn); err != nil {
		b.Fatal(err)
	}
	rawListIndexes(ctx, b, conn)
	s, tracer := tracedStore(b, dbURL)
	var cols string
	if err := s.Pool().QueryRow(ctx, `SELECT string_agg(column_name, ', ' ORDER BY ordinal_position)
		FROM information_schema.columns WHERE table_name = 'coupons'`).Scan(&cols); err != nil {
		b.Fatal(err)
	}
	p := proc(7)
	day := func(i int) *db.Date { // the welding day benchSite gives coupon i
		d := db.DateOf(time.Date(2019, 1, 1, 0, 0, 0, 0, time.UTC).AddDate(0, 0, i*2500/n))
		return &d
	}
	deep := db.SeqCursor("coupons", int64(n*9/10))
	rawPool := dbtest.RawPool(b, s) // the raw pages planned with PostgreSQL's defaults
	for _, c := range []struct {
		name   string
		f      db.CouponFilter
		cursor string
		raw    string // condition and order of the raw page
		args   []any
	}{
		{"none", db.CouponFilter{}, "", "true ORDER BY id", nil},
		{"none/deep", db.CouponFilter{}, deep, "true ORDER BY id", nil},
		{"procedure_id", db.CouponFilter{ProcedureID: &p}, "", "procedure_id = $2 ORDER BY welded_on", []any{p}},
		{"procedure_id/deep", db.CouponFilter{ProcedureID: &p}, deep, "procedure_id = $2 ORDER BY welded_on", []any{p}},
		{"welder_id", db.CouponFilter{WelderID: "W17"}, "", "welder_id = $2 ORDER BY welded_on", []any{"W17"}},
		// Coupon 19 has procedure 7 and welder 89 (benchSite: procedure 13i mod 60, welder 31i mod 250).
		{"procedure_id+welder_id", db.CouponFilter{ProcedureID: &p, WelderID: "W89"}, "",
			"procedure_id = $2 AND welder_id = $3 ORDER BY welded_on", []any{p, "W89"}},
		{"welded_from+to(late week)", db.CouponFilter{WeldedFrom: day(n * 8 / 10), WeldedTo: day(n*8/10 + n/300)}, "",
			"welded_on >= $2 AND welded_on < $3 ORDER BY welded_on", []any{day(n * 8 / 10), day(n*8/10 + n/300)}},
		{"welded_from(last tenth)", db.CouponFilter{WeldedFrom: day(n * 9 / 10)}, "",
			"welded_on >= $2 ORDER BY welded_on", []any{day(n * 9 / 10)}},
		{"welded_from(last tenth)/deep", db.CouponFilter{WeldedFrom: day(n * 9 / 10)}, deep,
			"welded_on >= $2 ORDER BY welded_on", []any{day(n * 9 / 10)}},
	} {
		store := func() error {
			page, err := s.Coupons(ctx, site, c.f, c.cursor, 50)
			if err == nil && len(page.Items) == 0 {
				err = fmt.Errorf("%s: an empty page", c.name)
			}
			return err
		}
		raw := func() error {
			rows, _ := rawPool.Query(ctx, "SELECT "+cols+" FROM coupons WHERE site = $1 AND "+c.raw+" LIMIT 50", append([]any{site}, c.args...)...)
			page, err := pgx.CollectRows(rows, pgx.RowToStructByName[db.Coupon])
			if err == nil && len(page) == 0 {
				err = fmt.Errorf("%s raw: an empty page", c.name)
			}
			return err
		}
		sideBySide(b, c.name, store, raw, listProfile{s, tracer, rawPool,
			"SELECT " + cols + " FROM coupons WHERE site = $1 AND " + c.raw + " LIMIT 50", append([]any{site}, c.args...)})
	}
}

// p95 is the 95th percentile of ds in milliseconds.
func p95(ds []time.Duration) float64 {
	s := slices.Clone(ds)
	slices.Sort(s)
	return float64(s[len(s)*95/100]) / 1e6
}

func sum(ds []time.Duration) time.Duration {
	var t time.Duration
	for _, d := range ds {
		t += d
	}
	return t
}
