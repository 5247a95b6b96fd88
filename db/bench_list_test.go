package db_test

import (
	"context"
	"crypto/sha256"
	"fmt"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// benchCoupons is how many coupons BenchmarkCouponListFiltered seeds at its site.
const benchCoupons = 100000

// BenchmarkCouponListFiltered compares one 50-coupon page filtered by
// procedure through the Store (log order, current revisions only, wait for
// the sequencer, row scanning) with a raw SELECT of a page of the same filter
// and columns through the same pool, side by side on one database of
// benchCoupons coupons seeded with COPY (60 procedures, 250 welders, 2,500
// welding days) and analyzed. Compare the ns/op figures as a ratio; -v logs
// the Store statement's EXPLAIN ANALYZE.
func BenchmarkCouponListFiltered(b *testing.B) {
	ctx := context.Background()
	dbURL, conn, proc := benchSite(b, benchCoupons)
	const site = "bench"
	if err := fillCouponList(ctx, conn); err != nil {
		b.Fatal(err)
	}
	s, tr := tracedStore(b, dbURL)
	var cols string
	if err := s.Pool().QueryRow(ctx, `SELECT string_agg(column_name, ', ' ORDER BY ordinal_position)
		FROM information_schema.columns WHERE table_name = 'coupons'`).Scan(&cols); err != nil {
		b.Fatal(err)
	}
	p := proc(7)
	if _, err := s.Coupons(ctx, site, db.CouponFilter{ProcedureID: &p}, "", 50); err != nil {
		b.Fatal(err)
	}
	q, args := tr.take()
	rows, _ := s.Pool().Query(ctx, "EXPLAIN ANALYZE "+q, args...)
	lines, _ := pgx.CollectRows(rows, pgx.RowTo[string])
	for _, l := range lines {
		b.Log(l)
	}
	b.ResetTimer()
	b.Run("Store", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			page, err := s.Coupons(ctx, site, db.CouponFilter{ProcedureID: &p}, "", 50)
			if err != nil || len(page.Items) != 50 {
				b.Fatalf("%d coupons, %v", len(page.Items), err)
			}
		}
	})
	rawPool := dbtest.RawPool(b, s) // the raw page planned with PostgreSQL's defaults
	b.Run("RawSelect", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			rows, _ := rawPool.Query(ctx, "SELECT "+cols+" FROM coupons WHERE site = $1 AND procedure_id = $2"+
				" ORDER BY welded_on LIMIT 50", site, p)
			page, err := pgx.CollectRows(rows, pgx.RowToStructByName[db.Coupon])
			if err != nil || len(page) != 50 {
				b.Fatalf("%d coupons, %v", len(page), err)
			}
		}
	})
}

// benchSite makes a fresh database whose site "bench" holds n coupons and one
// log leaf each, COPYed in (60 procedures, 250 welders, 2,500 welding days),
// with both tables analyzed. It returns the database URL, a superuser
// connection closed at the end, and the procedure id of coupon i. The leaves
// carry no valid tag: the benchmarks that use this read and stream, they
// never verify.
func benchSite(b testing.TB, n int) (string, *pgx.Conn, func(int) uuid.UUID) {
	b.Helper()
	ctx := context.Background()
	dbURL, conn := dbtest.FreshConn(b)
	const site = "bench"
	proc := func(i int) uuid.UUID { return uuid.NewSHA1(uuid.Nil, []byte(fmt.Sprint("procedure", i%60))) }
	day0 := time.Date(2019, 1, 1, 0, 0, 0, 0, time.UTC)
	ids := make([]uuid.UUID, n)
	for i := range ids {
		ids[i] = uuid.NewSHA1(uuid.Nil, []byte(fmt.Sprint("coupon", i)))
	}
	now := time.Now()
	if err := indexAfter(ctx, conn, "coupons", func() error {
		_, err := conn.CopyFrom(ctx, pgx.Identifier{"coupons"}, []string{"site", "id", "revision", "created_at",
			"created_by", "procedure_id", "coupon_mark", "welder_id", "welded_on", "joint_type", "thickness_mm",
			"pass_number", "current_a", "voltage_v", "travel_speed_mm_s", "wire_diameter_mm", "polarity", "position"},
			pgx.CopyFromSlice(n, func(i int) ([]any, error) {
				return []any{site, ids[i], 1, now, "bench", proc(i * 13), fmt.Sprint("C-", i), fmt.Sprint("W", i*31%250),
					day0.AddDate(0, 0, i*2500/n), "butt", 10.0, 1, 250.0, 25.0, 5.0, 1.2, "DCEP", "1G"}, nil
			}))
		return err
	}); err != nil {
		b.Fatal(err)
	}
	if err := indexAfter(ctx, conn, "log_leaves", func() error {
		_, err := conn.CopyFrom(ctx, pgx.Identifier{"log_leaves"}, []string{"site", "leaf_index", "kind", "version",
			"record_id", "revision", "leaf_hash", "actor", "action", "at", "integrated_at", "pending_seq"},
			pgx.CopyFromSlice(n, func(i int) ([]any, error) {
				h := sha256.Sum256(ids[i][:])
				return []any{site, int64(i), "coupon", 1, ids[i], 1, h[:], "bench", "create", now, now, int64(i + 1)}, nil
			}))
		return err
	}); err != nil {
		b.Fatal(err)
	}
	for _, t := range []string{"coupons", "log_leaves"} {
		if _, err := conn.Exec(ctx, "VACUUM ANALYZE "+t); err != nil {
			b.Fatal(err)
		}
	}
	return dbURL, conn, proc
}

// rawListIndexes builds the indexes a plain table would carry for the raw
// SELECT baselines' filters (a welder's or a period's coupons, PQRs and
// production records, a weld's production records, rejected sections), as
// the record tables had them before migration 000051, so that each baseline
// reads its page by index. The service keeps none of them (migration
// 000051): its lists read their keys (coupon_list, qualification_list,
// production_list), and on the record tables each of these would cost every
// write an index entry that no statement of the service reads.
func rawListIndexes(ctx context.Context, tb testing.TB, conn *pgx.Conn) {
	tb.Helper()
	for _, ix := range []string{
		"coupons (site, welder_id, welded_on)", "coupons (site, welded_on)",
		"qualification_records (site, welder_id, welded_on)", "qualification_records (site, welded_on)",
		"production_records (site, welder_id, recorded_at)", "production_records (site, recorded_at)",
		"production_records (site, weld_id)", "measurements (coupon_id) WHERE acceptance = 'reject'",
	} {
		if _, err := conn.Exec(ctx, "CREATE INDEX ON "+ix); err != nil {
			tb.Fatal(err)
		}
	}
	for _, t := range []string{"coupons", "qualification_records", "production_records", "measurements"} {
		if _, err := conn.Exec(ctx, "ANALYZE "+t); err != nil {
			tb.Fatal(err)
		}
	}
}

// indexAfter runs load with table's indexes that back no constraint
// dropped, and builds them again after: one sort per index instead of an
// insertion into each per row, which is most of a million-row seed.
func indexAfter(ctx context.Context, conn *pgx.Conn, table string, load func() error) error {
	rows, _ := conn.Query(ctx, `SELECT i.indexname, i.indexdef FROM pg_indexes i
		WHERE i.schemaname = current_schema() AND i.tablename = $1
		  AND NOT EXISTS (SELECT 1 FROM pg_constraint c WHERE c.conindid = (quote_ident(i.indexname))::regclass)`, table)
	type index struct{ name, def string }
	defs, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (index, error) {
		var x index
		return x, r.Scan(&x.name, &x.def)
	})
	if err != nil {
		return err
	}
	for _, d := range defs {
		if _, err := conn.Exec(ctx, "DROP INDEX "+pgx.Identifier{d.name}.Sanitize()); err != nil {
			return err
		}
	}
	if err := load(); err != nil {
		return err
	}
	for _, d := range defs {
		if _, err := conn.Exec(ctx, d.def); err != nil {
			return err
		}
	}
	return nil
}

// fillCouponList writes the coupons list's key of site "bench" as the
// sequencer would have (its indexes built after), and analyzes it.
func fillCouponList(ctx context.Context, conn *pgx.Conn) error {
	if err := indexAfter(ctx, conn, "coupon_list", func() error {
		_, err := conn.Exec(ctx, "INSERT INTO coupon_list SELECT * FROM coupon_list_derived WHERE site = 'bench'")
		return err
	}); err != nil {
		return err
	}
	_, err := conn.Exec(ctx, "VACUUM ANALYZE coupon_list")
	return err
}
