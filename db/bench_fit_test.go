package db_test

import (
	"context"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"runtime"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// fitBench is a seeded calibration group: the store, a direct connection
// for the baseline, the site, a spec selecting the whole group and the
// COPY of its selection query's rows.
type fitBench struct {
	s       *db.Store
	conn    *pgx.Conn
	site    string
	sp      db.CalibrationSpec
	copySQL string
}

// benchGroupSize is ETCHLOG_BENCH_FIT_COUPONS, default 20,000.
func benchGroupSize(b *testing.B) int {
	n := 20_000
	if v := os.Getenv("ETCHLOG_BENCH_FIT_COUPONS"); v != "" {
		var err error
		if n, err = strconv.Atoi(v); err != nil {
			b.Fatal(err)
		}
	}
	return n
}

// seedFitGroup seeds a fresh database with n coupons of one group, one
// section each (COPY), spread over current, voltage and travel speed by an
// invented power law with scatter.
func seedFitGroup(b *testing.B, n int) fitBench {
	ctx := context.Background()
	dbURL, conn := dbtest.FreshConn(b)
	s := dbtest.OpenApp(b, dbURL)
	const site = "bench-fit"
	p, err := s.CreateProcedure(ctx, actor(site), procedureData("WPS-FIT"))
	if err != nil {
		b.Fatal(err)
	}
	// Seeding only: skip the per-row triggers (one section per coupon is
	// true by construction), whose locks would overflow one COPY.
	if _, err := conn.Exec(ctx, "SET session_replication_role = replica"); err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	type row struct {
		id      uuid.UUID
		i, v, s float64
	}
	rows := make([]row, n)
	for k := range rows {
		rows[k] = row{uuid.New(), 150 + 150*rng.Float64(), 18 + 10*rng.Float64(), 3 + 6*rng.Float64()}
	}
	now := time.Now()
	if _, err := conn.CopyFrom(ctx, pgx.Identifier{"coupons"}, []string{"site", "id", "revision", "created_at",
		"created_by", "procedure_id", "coupon_mark", "welder_id", "welded_on", "joint_type", "thickness_mm",
		"pass_number", "current_a", "voltage_v", "travel_speed_mm_s", "wire_diameter_mm", "shielding_gas", "polarity", "position"},
		pgx.CopyFromSlice(n, func(k int) ([]any, error) {
			r := rows[k]
			return []any{site, r.id, 1, now, "bench", p.ID, fmt.Sprint("F-", k), "W1", now, "fillet", 6.0, 1,
				r.i, r.v, r.s, 0.9, "Ar-25CO2", "DCEP", "2F"}, nil
		})); err != nil {
		b.Fatal(err)
	}
	if _, err := conn.CopyFrom(ctx, pgx.Identifier{"measurements"}, []string{"site", "id", "revision", "created_at",
		"created_by", "coupon_id", "section", "penetration_mm", "bead_width_mm", "reinforcement_mm", "acceptance", "inspector"},
		pgx.CopyFromSlice(n, func(k int) ([]any, error) {
			r := rows[k]
			pen := 0.025 * r.i * math.Cbrt(r.i/(r.s*r.v*r.v)) * math.Exp(0.05*rng.NormFloat64())
			return []any{site, uuid.New(), 1, now, "bench", r.id, "A", pen, 7.5, 1.2, "accept", "QC"}, nil
		})); err != nil {
		b.Fatal(err)
	}
	if _, err := conn.Exec(ctx, "ANALYZE coupons; ANALYZE measurements; ANALYZE procedures"); err != nil {
		b.Fatal(err)
	}
	sp := db.CalibrationSpec{Model: db.CalibrationJacksonFree, Process: "GMAW", WireDiameterMM: 0.9,
		ShieldingGas: "Ar-25CO2", JointType: "fillet", Level: 0.95}
	// The same query, parameters written in: the site, no dates, no procedure.
	sel := strings.NewReplacer("$1", "'"+site+"'", "$2::date", "NULL::date", "$2", "NULL::date", "$3::date", "NULL::date",
		"$3", "NULL::date", "$4::uuid", "NULL::uuid", "$4", "NULL::uuid", "$5::timestamptz", "NULL::timestamptz").Replace(db.SiteCouponsSQL)
	copySQL := "COPY (" + sel + ") TO STDOUT"
	return fitBench{s: s, conn: conn, site: site, sp: sp, copySQL: copySQL}
}

// BenchmarkFitGroupStream fits the free Jackson model to a group of coupons
// with one section each (ETCHLOG_BENCH_FIT_COUPONS, default 20,000; seeded
// with COPY, spread over current, voltage and travel speed by an invented
// power law with scatter) by streaming them (Store.FitGroup), side by side
// with the baseline: COPY TO of the same selection query's rows, i.e. the
// time just to stream those columns out of PostgreSQL. It reports the ratio
// fit/COPY and the live heap after a fit (flat in the group's size).
func BenchmarkFitGroupStream(b *testing.B) {
	n := benchGroupSize(b)
	fb := seedFitGroup(b, n)
	ctx, s, conn, site, sp, copySQL := context.Background(), fb.s, fb.conn, fb.site, fb.sp, fb.copySQL
	var fitT, copyT time.Duration
	var heap uint64
	b.ResetTimer()
	for b.Loop() {
		t0 := time.Now()
		fit, err := s.FitGroup(ctx, site, sp.Filter(), db.CalibrationJacksonFree, 0)
		if err != nil {
			b.Fatal(err)
		}
		fitT += time.Since(t0)
		if fit.Penetration.N != n {
			b.Fatalf("fitted %d coupons, want %d", fit.Penetration.N, n)
		}
		runtime.GC()
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		heap = max(heap, ms.HeapAlloc)

		t0 = time.Now()
		tag, err := conn.PgConn().CopyTo(ctx, io.Discard, copySQL)
		if err != nil {
			b.Fatal(err)
		}
		copyT += time.Since(t0)
		if tag.RowsAffected() != int64(n) {
			b.Fatalf("COPY gave %d rows, want %d", tag.RowsAffected(), n)
		}
	}
	b.ReportMetric(float64(fitT.Milliseconds())/float64(b.N), "fit-ms/op")
	b.ReportMetric(float64(copyT.Milliseconds())/float64(b.N), "copy-ms/op")
	b.ReportMetric(float64(fitT)/float64(copyT), "fit/copy")
	b.ReportMetric(float64(heap)/(1<<20), "heap-MiB")
}
