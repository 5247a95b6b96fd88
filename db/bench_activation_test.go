package db_test

import (
	"context"
	"fmt"
	"os"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db"
)

// BenchmarkActivateCalibration activates a free-exponent Jackson
// calibration for a seeded group of ETCHLOG_BENCH_ACTIVATE_COUPONS coupons
// (default 100,000; one section each, seeded with COPY by seedFitGroup)
// while ETCHLOG_BENCH_ACTIVATE_WRITERS writers (default 4) create coupons in
// that group, and reports:
//   - activate-s: the activation (Store.ActivateCalibration) end to end;
//   - locked-ms: from the moment it held the exclusive flag locks to its
//     return (the most any coupon write of the process can wait for it);
//   - writer p99 and max latency of the creates started in the 3 s before
//     the activation and of those started while it computed (before it
//     took the flag locks), and the count and max of those started while it
//     held them (those wait for its commit);
//   - max-lock-wait-ms: the longest any writer was seen waiting on a flag
//     or drift chart lock while the activation ran (pg_stat_activity,
//     sampled every 2 ms);
//   - raw-s: the baseline, the same number of flag rows as the activation
//     left, deleted and inserted again by two raw statements (DELETE …
//     USING, INSERT … SELECT from a copy) in one transaction on a direct
//     connection, rolled back; and the ratio activate/raw.
//
// Run the 100,000-coupon size under the heavy-run lock:
// flock /work/wt/heavy.lock go test ./db/ -run XXX -bench BenchmarkActivateCalibration -benchtime 1x -timeout 30m
func BenchmarkActivateCalibration(b *testing.B) {
	n := envInt(b, "ETCHLOG_BENCH_ACTIVATE_COUPONS", 100_000)
	writers := envInt(b, "ETCHLOG_BENCH_ACTIVATE_WRITERS", 4)
	fb := seedFitGroup(b, n)
	ctx, s, site := context.Background(), fb.s, fb.site
	var proc uuid.UUID
	if err := fb.conn.QueryRow(ctx, `SELECT id FROM procedures WHERE site = $1`, site).Scan(&proc); err != nil {
		b.Fatal(err)
	}
	sctx, cancelSeq := context.WithCancel(ctx)
	defer cancelSeq()
	go s.RunSequencer(sctx, db.SequencerOptions{}) //nolint:errcheck // ends with the benchmark
	t0 := time.Now()
	cal, err := s.CreateCalibration(ctx, actor(site), fb.sp)
	if err != nil {
		b.Fatal(err)
	}
	b.Logf("calibration over %d coupons stored in %.1f s", cal.SampleCount, time.Since(t0).Seconds())
	if os.Getenv("ETCHLOG_BENCH_EXPLAIN") != "" { // the plans of the activation's two streamed queries
		for name, q := range db.ActivationQueriesForTest {
			args := []any{site, "GMAW", "fillet"}
			if name == "drift" {
				args = append(args, cal.ID)
			}
			rows, _ := fb.conn.Query(ctx, "EXPLAIN (ANALYZE, BUFFERS) "+q, args...)
			plan, err := pgx.CollectRows(rows, pgx.RowTo[string])
			if err != nil {
				b.Fatal(err)
			}
			fmt.Printf("%s:\n%s\n", name, strings.Join(plan, "\n"))
		}
	}

	// Writers: coupons of the group, one after another each, until stopped;
	// each latency is kept with its start time.
	type write struct {
		start time.Time
		took  time.Duration
	}
	var mu sync.Mutex
	var writes []write
	var stop atomic.Bool
	var seq atomic.Int64
	var wg sync.WaitGroup
	for w := range writers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for !stop.Load() {
				d := fitCoupon(proc, int(seq.Add(1)))
				d.CouponMark = fmt.Sprintf("BENCH-W%d-%d", w, seq.Load())
				d.WelderID, d.PowerSourceID, d.FillerLot = "W1", "", ""
				st := time.Now()
				if _, err := s.CreateCoupon(ctx, actor(site), d); err != nil {
					b.Error(err)
					return
				}
				mu.Lock()
				writes = append(writes, write{st, time.Since(st)})
				mu.Unlock()
			}
		}()
	}
	time.Sleep(3 * time.Second) // writers alone: the "before" latencies

	var locked time.Time
	db.SetActivationHookForTest(site, "locked", func() { locked = time.Now() })
	defer db.SetActivationHookForTest(site, "locked", nil)
	// Lock waits of the writers, sampled every 2 ms from pg_stat_activity: a
	// backend waiting on a flag lock (shared) or a drift chart's lock, the
	// longest uninterrupted wait seen.
	var maxWait time.Duration
	sampling, sampled := make(chan struct{}), make(chan struct{})
	go func() {
		defer close(sampled)
		since := map[int32]time.Time{}
		for {
			select {
			case <-sampling:
				return
			case <-time.After(2 * time.Millisecond):
			}
			rows, _ := fb.conn.Query(ctx, `SELECT pid FROM pg_stat_activity WHERE datname = current_database()
				AND wait_event_type = 'Lock' AND wait_event = 'advisory'
				AND (query LIKE '%lock_shared%' OR query LIKE '%etchlog-drift%')`)
			pids, err := pgx.CollectRows(rows, pgx.RowTo[int32])
			if err != nil {
				b.Error(err)
				return
			}
			now, still := time.Now(), map[int32]time.Time{}
			for _, p := range pids {
				st, ok := since[p]
				if !ok {
					st = now
				}
				still[p] = st
				maxWait = max(maxWait, now.Sub(st))
			}
			since = still
		}
	}()
	var actT, lockT, rawT time.Duration
	var begun, ended time.Time
	b.ResetTimer()
	for b.Loop() {
		begun = time.Now()
		if _, err := s.ActivateCalibration(ctx, actor(site), cal.ID, "bench"); err != nil {
			b.Fatal(err)
		}
		ended = time.Now()
		actT += ended.Sub(begun)
		lockT += ended.Sub(locked)
	}
	b.StopTimer()
	close(sampling)
	<-sampled
	stop.Store(true)
	wg.Wait()

	// The baseline: the flag rows the activation left, deleted and inserted again raw.
	var rows int
	if err := fb.conn.QueryRow(ctx, `SELECT count(*) FROM flags WHERE site = $1 AND subject_kind = 'coupon'
		AND (kind IN ('model', 'suspect_units') OR (kind = 'not_checkable' AND variable = 'predicted_penetration_mm'))`, site).Scan(&rows); err != nil {
		b.Fatal(err)
	}
	for range b.N {
		tx, err := fb.conn.Begin(ctx)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := tx.Exec(ctx, `CREATE TEMP TABLE raw_flags ON COMMIT DROP AS SELECT * FROM flags WHERE site = $1 AND subject_kind = 'coupon'
			AND (kind IN ('model', 'suspect_units') OR (kind = 'not_checkable' AND variable = 'predicted_penetration_mm'))`, site); err != nil {
			b.Fatal(err)
		}
		st := time.Now()
		if _, err := tx.Exec(ctx, `DELETE FROM flags f USING raw_flags r WHERE f.site = r.site AND f.subject_id = r.subject_id
			AND f.variable = r.variable AND f.kind = r.kind`); err != nil {
			b.Fatal(err)
		}
		if _, err := tx.Exec(ctx, `INSERT INTO flags SELECT * FROM raw_flags`); err != nil {
			b.Fatal(err)
		}
		rawT += time.Since(st)
		if err := tx.Rollback(ctx); err != nil {
			b.Fatal(err)
		}
	}

	var before, computing, lockWin []time.Duration
	for _, w := range writes {
		switch {
		case w.start.Before(begun) && w.start.After(begun.Add(-3*time.Second)):
			before = append(before, w.took)
		case !w.start.Before(begun) && w.start.Before(locked):
			computing = append(computing, w.took)
		case !w.start.Before(locked) && w.start.Before(ended):
			lockWin = append(lockWin, w.took)
		}
	}
	p99 := func(d []time.Duration) (float64, float64) {
		if len(d) == 0 {
			return 0, 0
		}
		slices.Sort(d)
		return float64(d[(len(d)*99)/100].Microseconds()) / 1000, float64(d[len(d)-1].Microseconds()) / 1000
	}
	bp99, bmax := p99(before)
	cp99, cmax := p99(computing)
	_, lmax := p99(lockWin)
	b.ReportMetric(actT.Seconds()/float64(b.N), "activate-s")
	b.ReportMetric(float64(lockT.Milliseconds())/float64(b.N), "locked-ms")
	b.ReportMetric(rawT.Seconds()/float64(b.N), "raw-s")
	b.ReportMetric(float64(actT)/float64(rawT), "x-of-raw")
	b.ReportMetric(float64(rows), "flag-rows")
	b.ReportMetric(float64(len(before)), "writes-before")
	b.ReportMetric(bp99, "before-p99-ms")
	b.ReportMetric(bmax, "before-max-ms")
	b.ReportMetric(float64(maxWait.Microseconds())/1000, "max-lock-wait-ms")
	b.ReportMetric(float64(len(computing)), "writes-computing")
	b.ReportMetric(cp99, "computing-p99-ms")
	b.ReportMetric(cmax, "computing-max-ms")
	b.ReportMetric(float64(len(lockWin)), "writes-locked")
	b.ReportMetric(lmax, "locked-write-max-ms")
}

// envInt is the integer environment variable name, or def.
func envInt(b *testing.B, name string, def int) int {
	v := os.Getenv(name)
	if v == "" {
		return def
	}
	n, err := strconv.Atoi(v)
	if err != nil {
		b.Fatalf("%s: %v", name, err)
	}
	return n
}
