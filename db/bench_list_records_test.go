package db_test

import (
	"context"
	"fmt"
	"os"
	"strconv"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// BenchmarkRecordListScale pages the sections list, the flags list and the
// other record lists of one site holding ETCHLOG_BENCH_LIST_COUPONS coupons
// (default 100,000), seeded like BenchmarkCouponListScale, with a section on
// every second coupon (every tenth of those rejected) logged after the
// coupons, a flag on every third coupon (kinds and variables in turn), and
// the procedures, qualification records, production records and sign-offs
// seedOtherLists adds. Each filter the lists offer runs on the first page
// and deep, side by side with a raw
// SELECT of a 50-row page of the same filter from the same table through the
// same pool, as in BenchmarkCouponListScale (clients=1: p95 of each and
// x-of-raw, the raw time over the Store's; clients=8: pages/s of each and
// their ratio).
func BenchmarkRecordListScale(b *testing.B) {
	n := envInt(b, "ETCHLOG_BENCH_LIST_COUPONS", 100000)
	ctx := context.Background()
	dbURL, conn, proc := benchSite(b, n)
	const site = "bench"
	seedSectionsAndFlags(ctx, b, conn, n)
	s, tracer := tracedStore(b, dbURL)
	var sectionCols string
	if err := s.Pool().QueryRow(ctx, `SELECT string_agg(column_name, ', ' ORDER BY ordinal_position)
		FROM information_schema.columns WHERE table_name = 'measurements'`).Scan(&sectionCols); err != nil {
		b.Fatal(err)
	}
	flagCols := "subject_kind, subject_id, subject_at, procedure_id, ranges_version, kind, variable, unit, value, value_text, min, max, allowed, direction, excess, excess_pct, detail, computed_at"
	// A coupon with a section (every second one) and a flag (every third): coupon 6.
	var coupon uuid.UUID
	if err := conn.QueryRow(ctx, "SELECT record_id FROM log_leaves WHERE site = 'bench' AND leaf_index = 6").Scan(&coupon); err != nil {
		b.Fatal(err)
	}
	deepSections := db.SeqCursor("measurements", int64(n+n/2*9/10))
	var dSubject uuid.UUID
	var dVariable, dKind string
	if err := conn.QueryRow(ctx, "SELECT subject_id, variable, kind FROM flags WHERE site = 'bench' ORDER BY subject_id, variable, kind OFFSET $1 LIMIT 1",
		n/3*9/10).Scan(&dSubject, &dVariable, &dKind); err != nil {
		b.Fatal(err)
	}
	deepFlags := db.EncodeCursor("flags", dSubject.String(), dVariable, dKind)
	p := proc(9)                    // flagged coupons (every third) use procedures 0, 3, 6, 9, ...: 13i mod 60 = 9 for i = 33
	day := func(i int) *time.Time { // the welding day benchSite gives coupon i
		d := time.Date(2019, 1, 1, 0, 0, 0, 0, time.UTC).AddDate(0, 0, i*2500/n)
		return &d
	}
	sections := func(f db.MeasurementFilter, cursor string) func() (int, error) {
		return func() (int, error) {
			page, err := s.Measurements(ctx, site, f, cursor, 50)
			return len(page.Items), err
		}
	}
	flags := func(f db.FlagFilter, cursor string) func() (int, error) {
		return func() (int, error) {
			page, err := s.Flags(ctx, site, f, cursor, 50)
			return len(page.Items), err
		}
	}
	rawSections := "SELECT " + sectionCols + " FROM measurements WHERE site = $1 AND "
	rawFlags := "SELECT " + flagCols + " FROM flags WHERE site = $1 AND "
	cases := []recordListCase{
		{"sections/none", sections(db.MeasurementFilter{}, ""), rawSections + "true ORDER BY id LIMIT 50", nil},
		{"sections/none/deep", sections(db.MeasurementFilter{}, deepSections), rawSections + "true ORDER BY id LIMIT 50", nil},
		{"sections/acceptance=reject", sections(db.MeasurementFilter{Acceptance: "reject"}, ""),
			rawSections + "acceptance = 'reject' ORDER BY id LIMIT 50", nil},
		{"sections/acceptance=reject/deep", sections(db.MeasurementFilter{Acceptance: "reject"}, deepSections),
			rawSections + "acceptance = 'reject' ORDER BY id LIMIT 50", nil},
		{"sections/coupon_id", sections(db.MeasurementFilter{CouponID: &coupon}, ""),
			rawSections + "coupon_id = $2 ORDER BY id LIMIT 50", []any{coupon}},
		{"flags/none", flags(db.FlagFilter{}, ""), rawFlags + "true ORDER BY subject_id, variable, kind LIMIT 50", nil},
		{"flags/none/deep", flags(db.FlagFilter{}, deepFlags), rawFlags + "true ORDER BY subject_id, variable, kind LIMIT 50", nil},
		{"flags/kind", flags(db.FlagFilter{Kind: "model"}, ""), rawFlags + "kind = 'model' ORDER BY subject_id, variable, kind LIMIT 50", nil},
		{"flags/variable/deep", flags(db.FlagFilter{Variable: "voltage_v"}, deepFlags),
			rawFlags + "variable = 'voltage_v' ORDER BY subject_id, variable, kind LIMIT 50", nil},
		{"flags/procedure_id", flags(db.FlagFilter{ProcedureID: &p}, ""),
			rawFlags + "procedure_id = $2 ORDER BY subject_id LIMIT 50", []any{p}},
		{"flags/procedure_id/deep", flags(db.FlagFilter{ProcedureID: &p}, deepFlags),
			rawFlags + "procedure_id = $2 ORDER BY subject_id LIMIT 50", []any{p}},
		{"flags/from+to(late week)", flags(db.FlagFilter{From: day(n * 8 / 10), To: day(n*8/10 + n/300)}, ""),
			rawFlags + "subject_at >= $2 AND subject_at < $3 ORDER BY subject_at LIMIT 50", []any{day(n * 8 / 10), day(n*8/10 + n/300)}},
		{"flags/from(last tenth)", flags(db.FlagFilter{From: day(n * 9 / 10)}, ""),
			rawFlags + "subject_at >= $2 ORDER BY subject_at LIMIT 50", []any{day(n * 9 / 10)}},
		{"flags/subject_id", flags(db.FlagFilter{SubjectID: &coupon}, ""),
			rawFlags + "subject_id = $2 ORDER BY subject_id LIMIT 50", []any{coupon}},
	}
	cases = append(cases, otherListCases(ctx, b, s, conn, n)...)
	rawPool := dbtest.RawPool(b, s) // the raw pages planned with PostgreSQL's defaults
	for _, c := range cases {
		store := func() error {
			got, err := c.store()
			if err == nil && got == 0 {
				err = fmt.Errorf("%s: an empty page", c.name)
			}
			return err
		}
		raw := func() error {
			rows, _ := rawPool.Query(ctx, c.raw, append([]any{site}, c.args...)...)
			got := 0
			for rows.Next() {
				if _, err := rows.Values(); err != nil {
					return err
				}
				got++
			}
			if err := rows.Err(); err != nil {
				return err
			}
			if got == 0 {
				return fmt.Errorf("%s raw: an empty page", c.name)
			}
			return nil
		}
		sideBySide(b, c.name, store, raw, listProfile{s, tracer, rawPool, c.raw, append([]any{site}, c.args...)})
	}
}

// recordListCase is one list page of BenchmarkRecordListScale: the Store's
// call (it returns the page's length) and a raw page's statement ($1 the
// site, args after it).
type recordListCase struct {
	name  string
	store func() (int, error)
	raw   string
	args  []any
}

// sideBySide runs one list case against its raw page at 1 client (calls
// alternating: p95 of each, x-of-raw the raw time over the Store's) and at 8
// clients (pages/s of each, x-of-raw their ratio; the sides take turns in
// rounds of listRound pages, so that a change of the machine's load falls
// on both), each after both sides' connections are warmed alike
// (dbtest.Warm).
// With ETCHLOG_BENCH_EXPLAIN set, the 1-client run also reports each side's
// plan profile (profile.report).
func sideBySide(b *testing.B, name string, store, raw func() error, profile listProfile) {
	warm := func(b *testing.B, clients int) {
		if err := dbtest.Warm(clients, store, raw); err != nil {
			b.Fatal(err)
		}
		b.ResetTimer()
	}
	b.Run(name+"/clients=1", func(b *testing.B) {
		warm(b, 1)
		if os.Getenv("ETCHLOG_BENCH_EXPLAIN") != "" {
			profile.report(b, store)
		}
		ts, tr := alternate(b, store, raw)
		b.ReportMetric(p95(ts), "store-p95-ms")
		b.ReportMetric(p95(tr), "raw-p95-ms")
		b.ReportMetric(float64(sum(tr))/float64(sum(ts)), "x-of-raw")
	})
	b.Run(name+"/clients=8", func(b *testing.B) {
		warm(b, 8)
		ds, dr := dbtest.TimeRounds(b, 8, b.N, listRound, store, raw)
		b.ReportMetric(float64(b.N)/ds.Seconds(), "store-pages/s")
		b.ReportMetric(float64(b.N)/dr.Seconds(), "raw-pages/s")
		b.ReportMetric(dr.Seconds()/ds.Seconds(), "x-of-raw")
	})
}

// listProfile is what a list case's plans are profiled from: the Store and
// the tracer of its statements, and the raw page's pool, statement and
// arguments.
type listProfile struct {
	s      *db.Store
	tr     *listTracer
	raw    *pgxpool.Pool
	rawSQL string
	args   []any
}

// report reads one page through store, then runs EXPLAIN (ANALYZE,
// BUFFERS) on the statement it sent (with the generic plan, the one a warm
// connection runs when PostgreSQL has chosen it, and with the plan made for
// its arguments) and on the raw page's, and reports the buffers each read
// (shared hits and reads) and each plan's execution time: where a page's
// database time goes, beside the raw page's.
func (p listProfile) report(b *testing.B, store func() error) {
	ctx := context.Background()
	p.tr.take()
	if err := store(); err != nil {
		b.Fatal(err)
	}
	sql, args := p.tr.take()
	if sql == "" {
		b.Fatal("no list statement seen")
	}
	cost := func(pool *pgxpool.Pool, sql string, args []any, generic bool) (buffers, ms float64) {
		root, err := explainListWith(ctx, pool, "ANALYZE, BUFFERS, FORMAT JSON", sql, args, generic)
		if err != nil {
			b.Fatalf("explain: %v\n%s", err, sql)
		}
		hit, _ := root["Shared Hit Blocks"].(float64)
		read, _ := root["Shared Read Blocks"].(float64)
		total, _ := root["Actual Total Time"].(float64)
		return hit + read, total
	}
	for _, side := range []struct {
		name    string
		pool    *pgxpool.Pool
		sql     string
		args    []any
		generic bool
	}{{"store-generic", p.s.Pool(), sql, args, true}, {"store-custom", p.s.Pool(), sql, args, false}, {"raw", p.raw, p.rawSQL, p.args, false}} {
		buffers, ms := cost(side.pool, side.sql, side.args, side.generic)
		b.ReportMetric(buffers, side.name+"-buffers")
		b.ReportMetric(ms, side.name+"-exec-ms")
	}
}

// listRound is how many pages one side reads at 8 clients before the
// other side's turn.
const listRound = 250

// alternate calls store and raw one after the other b.N times, so that a
// change of the machine's load falls on both, and returns each call's time.
func alternate(b *testing.B, store, raw func() error) (ts, tr []time.Duration) {
	for i := 0; i < b.N; i++ {
		t0 := time.Now()
		if err := store(); err != nil {
			b.Fatal(err)
		}
		t1 := time.Now()
		if err := raw(); err != nil {
			b.Fatal(err)
		}
		ts, tr = append(ts, t1.Sub(t0)), append(tr, time.Since(t1))
	}
	return ts, tr
}

// seedSectionsAndFlags adds to benchSite's n coupons a section on every
// second coupon (every tenth of them rejected), logged after the coupons,
// and a flag on every third coupon, writes the sections list's key, and
// analyzes the tables.
func seedSectionsAndFlags(ctx context.Context, tb testing.TB, conn *pgx.Conn, n int) {
	tb.Helper()
	for _, q := range []string{
		"SET session_replication_role = replica", // the seed's rows are unique by construction
		`INSERT INTO measurements (site, id, revision, created_at, created_by, coupon_id, section, penetration_mm,
			bead_width_mm, reinforcement_mm, acceptance, inspector)
		SELECT site, md5('section' || leaf_index)::uuid, 1, now(), 'bench', record_id, 'A', 2, 8, 1,
			CASE WHEN leaf_index % 20 = 0 THEN 'reject' ELSE 'accept' END, 'QC'
		FROM log_leaves WHERE site = 'bench' AND kind = 'coupon' AND leaf_index % 2 = 0`,
		`INSERT INTO log_leaves (site, leaf_index, kind, version, record_id, revision, leaf_hash, actor, action, at, integrated_at, pending_seq)
		SELECT 'bench', ` + strconv.Itoa(n) + ` + g.i - 1, 'measurement', 1, g.id, 1, sha256(g.id::text::bytea), 'bench', 'create', now(), now(), ` +
			strconv.Itoa(n) + ` + g.i
		FROM (SELECT id, row_number() OVER (ORDER BY created_at, coupon_id) AS i FROM measurements WHERE site = 'bench') g`,
		`INSERT INTO flags (site, subject_kind, subject_id, subject_at, procedure_id, ranges_version, kind, variable, detail, computed_at)
		SELECT c.site, 'coupon', c.id, c.welded_on, c.procedure_id, 1, (ARRAY['range','model','not_checkable'])[1 + l.leaf_index / 3 % 3],
			(ARRAY['current_a','voltage_v','travel_speed_mm_s','thickness_mm'])[1 + l.leaf_index / 3 % 4], 'seeded', now()
		FROM log_leaves l JOIN coupons c ON c.site = l.site AND c.id = l.record_id
		WHERE l.site = 'bench' AND l.kind = 'coupon' AND l.leaf_index % 3 = 0`,
		"SET session_replication_role = origin",
		"VACUUM ANALYZE measurements", "VACUUM ANALYZE log_leaves", "VACUUM ANALYZE flags",
	} {
		if _, err := conn.Exec(ctx, q); err != nil {
			tb.Fatalf("%v\n%s", err, q)
		}
	}
	// The sections list's key, as the sequencer would have written it.
	if err := indexAfter(ctx, conn, "section_list", func() error {
		_, err := conn.Exec(ctx, "INSERT INTO section_list SELECT * FROM section_list_derived WHERE site = 'bench'")
		return err
	}); err != nil {
		tb.Fatal(err)
	}
	if _, err := conn.Exec(ctx, "VACUUM ANALYZE section_list"); err != nil {
		tb.Fatal(err)
	}
}

// BenchmarkSectionListRefresh measures what the sections list's key adds to
// the log sequencer per section leaf: on BenchmarkRecordListScale's site
// (ETCHLOG_BENCH_LIST_COUPONS coupons, a section on every second), a batch of
// sections (50, a paced pass under writes; 2,000, a full batch) has its
// section_list rows rewritten as the sequencer does (DELETE, INSERT from
// section_list_derived) beside the coupon_list rewrite the sequencer already
// made for the same sections' coupons (DELETE and INSERT from
// coupon_list_derived, the coupons found from the sections' ids), all with
// the sequencer's own statements, each in its own transaction rolled back, alternating.
// It reports each one's time per leaf and the section rewrite as a share of
// the coupon rewrite.
func BenchmarkSectionListRefresh(b *testing.B) {
	n := envInt(b, "ETCHLOG_BENCH_LIST_COUPONS", 100000)
	ctx := context.Background()
	_, conn, _ := benchSite(b, n)
	seedSectionsAndFlags(ctx, b, conn, n)
	if err := fillCouponList(ctx, conn); err != nil {
		b.Fatal(err)
	}
	for _, size := range []int{50, 2000} {
		b.Run(fmt.Sprintf("batch=%d", size), func(b *testing.B) {
			var sections, couponsTime time.Duration
			for i := 0; i < b.N; i++ {
				// A different batch each time, spread over the log.
				rows, _ := conn.Query(ctx, `SELECT id FROM measurements WHERE site = 'bench' ORDER BY id OFFSET $1 LIMIT $2`,
					(i*size*7)%(n/2-size), size)
				ids, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
				if err != nil {
					b.Fatal(err)
				}
				timed := func(stmts func(tx pgx.Tx) error) time.Duration {
					tx, err := conn.Begin(ctx)
					if err != nil {
						b.Fatal(err)
					}
					defer tx.Rollback(ctx) //nolint:errcheck // rolled back on purpose
					t0 := time.Now()
					if err := stmts(tx); err != nil {
						b.Fatal(err)
					}
					return time.Since(t0)
				}
				sections += timed(func(tx pgx.Tx) error {
					bt := &pgx.Batch{}
					bt.Queue(db.SectionListDelete, "bench", ids)
					bt.Queue(db.SectionListRefresh, "bench", ids)
					return tx.SendBatch(ctx, bt).Close()
				})
				couponsTime += timed(func(tx pgx.Tx) error {
					// As the sequencer queues it: no coupon leaves, the
					// sections' ids, whose coupons the statements find.
					bt := &pgx.Batch{}
					bt.Queue(db.CouponListDelete, "bench", []uuid.UUID{}, ids)
					bt.Queue(db.CouponListRefresh, "bench", []uuid.UUID{}, ids)
					return tx.SendBatch(ctx, bt).Close()
				})
			}
			leaves := float64(b.N * size)
			b.ReportMetric(float64(sections.Microseconds())/leaves, "section-list-us/leaf")
			b.ReportMetric(float64(couponsTime.Microseconds())/leaves, "coupon-list-us/leaf")
			b.ReportMetric(float64(sections)/float64(couponsTime), "x-of-coupon-list")
		})
	}
}
