package db_test

import (
	"context"
	"io"
	"runtime"
	"sync"
	"testing"
	"time"
)

// BenchmarkCreateCalibrationStream stores calibrations (Store.CreateCalibration:
// one streamed pass inside the write transaction, the selection, count and
// digest stored) over a seeded group of ETCHLOG_BENCH_FIT_COUPONS coupons
// (default 20,000; seedFitGroup), side by side with the baseline: COPY TO of
// the same selection query's rows. It reports the ratio, the peak heap in
// use while the calibration is made (sampled every 5 ms, garbage included),
// the live heap after it, and the stored row's size: all flat in the
// group's size.
func BenchmarkCreateCalibrationStream(b *testing.B) {
	n := benchGroupSize(b)
	fb := seedFitGroup(b, n)
	ctx := context.Background()
	var createT, copyT time.Duration
	var peak, live uint64
	var rowBytes int
	b.ResetTimer()
	for b.Loop() {
		runtime.GC()
		stop, done := make(chan struct{}), sync.WaitGroup{}
		done.Add(1)
		go func() { // the peak heap while the calibration is made
			defer done.Done()
			var ms runtime.MemStats
			for {
				runtime.ReadMemStats(&ms)
				peak = max(peak, ms.HeapAlloc)
				select {
				case <-stop:
					return
				case <-time.After(5 * time.Millisecond):
				}
			}
		}()
		t0 := time.Now()
		c, err := fb.s.CreateCalibration(ctx, actor(fb.site), fb.sp)
		createT += time.Since(t0)
		close(stop)
		done.Wait()
		if err != nil {
			b.Fatal(err)
		}
		if c.SampleCount != n || c.Samples != nil && n > 5000 {
			b.Fatalf("calibration over %d coupons (samples listed: %v), want %d unlisted", c.SampleCount, c.Samples != nil, n)
		}
		runtime.GC()
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		live = max(live, ms.HeapAlloc)
		if err := fb.conn.QueryRow(ctx, `SELECT pg_column_size(c.*) FROM calibrations c WHERE site = $1 AND id = $2`,
			fb.site, c.ID).Scan(&rowBytes); err != nil {
			b.Fatal(err)
		}

		t0 = time.Now()
		tag, err := fb.conn.PgConn().CopyTo(ctx, io.Discard, fb.copySQL)
		if err != nil {
			b.Fatal(err)
		}
		copyT += time.Since(t0)
		if tag.RowsAffected() != int64(n) {
			b.Fatalf("COPY gave %d rows, want %d", tag.RowsAffected(), n)
		}
	}
	b.ReportMetric(float64(createT.Milliseconds())/float64(b.N), "create-ms/op")
	b.ReportMetric(float64(copyT.Milliseconds())/float64(b.N), "copy-ms/op")
	b.ReportMetric(float64(createT)/float64(copyT), "create/copy")
	b.ReportMetric(float64(peak)/(1<<20), "peak-heap-MiB")
	b.ReportMetric(float64(live)/(1<<20), "live-heap-MiB")
	b.ReportMetric(float64(rowBytes), "row-bytes")
}
