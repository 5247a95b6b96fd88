package db_test

import (
	"context"
	"fmt"
	"io"
	"runtime"
	"runtime/metrics"
	"testing"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// BenchmarkExport streams a whole site through Store.ExportTo (every coupon
// revision in its readable form, then every leaf with its fact encoded again
// from the stored row, written as the export endpoint writes them, to
// io.Discard) and, side by side on the same database, a raw COPY TO of the
// same rows (coupons, then log_leaves). Compare the two ns/op as a ratio;
// Alternating runs the two one after the other b.N times and reports the
// ratio of their times (x-of-raw). The site holds
// ETCHLOG_BENCH_EXPORT_COUPONS coupons (default 100,000; set 1000000 for
// the million-coupon run), seeded with COPY. It reports the largest live heap seen while the export ran
// (peak-heap-MiB): a constant-memory export keeps it flat as the site grows.
func BenchmarkExport(b *testing.B) {
	n := envInt(b, "ETCHLOG_BENCH_EXPORT_COUPONS", 100000)
	ctx := context.Background()
	dbURL, conn, _ := benchSite(b, n)
	const site = "bench"
	s := dbtest.OpenApp(b, dbURL)
	var peak uint64
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	store := func() error {
		runtime.GC()
		out := db.NewExportWriter(io.Discard)
		lines := 0
		out.OnLine(func() {
			if lines++; lines%20000 == 0 {
				metrics.Read(sample)
				peak = max(peak, sample[0].Value.Uint64())
			}
		})
		sum, err := s.ExportTo(ctx, site, out)
		if err == nil {
			err = out.Flush()
		}
		if err == nil && (sum.Records < int64(n) || sum.Leaves != int64(n)) {
			err = fmt.Errorf("export: %+v; want at least %d revisions (the built-in rule sets come too) and %d leaves", sum, n, n)
		}
		return err
	}
	raw := func() error {
		for _, q := range []string{
			"COPY (SELECT * FROM coupons WHERE site = 'bench') TO STDOUT",
			"COPY (SELECT * FROM log_leaves WHERE site = 'bench' ORDER BY leaf_index) TO STDOUT",
		} {
			if _, err := conn.PgConn().CopyTo(ctx, io.Discard, q); err != nil {
				return err
			}
		}
		return nil
	}
	b.ResetTimer()
	b.Run("Store", func(b *testing.B) {
		peak = 0
		for i := 0; i < b.N; i++ {
			if err := store(); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64(peak)/(1<<20), "peak-heap-MiB")
	})
	b.Run("RawCopy", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			if err := raw(); err != nil {
				b.Fatal(err)
			}
		}
	})
	// The two again, one after the other b.N times: a change of the
	// machine's load falls on both.
	b.Run("Alternating", func(b *testing.B) {
		calls, rawCalls := alternate(b, store, raw)
		ts, tr := sum(calls), sum(rawCalls)
		b.ReportMetric(ts.Seconds()/float64(b.N), "store-s/op")
		b.ReportMetric(tr.Seconds()/float64(b.N), "raw-s/op")
		b.ReportMetric(tr.Seconds()/ts.Seconds(), "x-of-raw")
	})
}
