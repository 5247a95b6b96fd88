package db_test

import (
	"context"
	"fmt"
	"os"
	"strconv"
	"sync/atomic"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/transparency-dev/merkle/compact"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/db/logfmt"
)

// BenchmarkCouponWriteConcurrent compares coupon writes through the Store
// (one transaction: link checks, mark claim, revision row, pending leaf,
// flags) with the baseline of a raw pgx INSERT of the same columns in one
// transaction, at 8 and 32 concurrent clients on the same pool and
// database, side by side: the two alternate in rounds of writeRound writes,
// so a change in the machine's load falls on both. ns/op is the Store's;
// raw-ns/op the baseline's; x-of-raw the Store's throughput as a fraction
// of the baseline's. It also reports the sequencer's largest pending
// backlog (sampled every 5 ms) and the p50/p99 delay from a write's commit
// time to its log index, which is when it appears in lists.
//
// With ETCHLOG_BENCH_WRITE_COUPONS=n the writes go to a site already holding
// n coupons with their marks and log leaves, COPYed in (benchSite); without
// it, to a fresh site of the package's test database.
func BenchmarkCouponWriteConcurrent(b *testing.B) {
	ctx := context.Background()
	s, site := writeBenchSite(b)
	var n atomic.Int64 // marks stay unique across the benchmark's repeated runs
	for _, clients := range []int{8, 32} {
		p, err := s.CreateProcedure(ctx, actor(site), procedureData(fmt.Sprintf("WPS-BC-%d-%d", clients, time.Now().UnixNano())))
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("c=%d", clients), func(b *testing.B) {
			store := func() error {
				_, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("B-C-%d", n.Add(1))))
				return err
			}
			c := couponData(p.ID, "")
			raw := func() error {
				return dbtest.RawCoupon(ctx, s.Pool(), site+"-raw", fmt.Sprintf("B-R-%d", n.Add(1)), c)
			}
			stop := make(chan struct{})
			var backlog atomic.Int64
			go sampleBacklog(s, stop, &backlog)
			start := time.Now()
			b.ResetTimer()
			inStore, inRaw := dbtest.TimeRounds(b, clients, b.N, writeRound, store, raw)
			b.StopTimer()
			close(stop)
			if err := s.AwaitLogged(ctx, site); err != nil {
				b.Fatal(err)
			}
			b.ReportMetric(float64(inStore.Nanoseconds())/float64(b.N), "ns/op")
			b.ReportMetric(float64(inRaw.Nanoseconds())/float64(b.N), "raw-ns/op")
			b.ReportMetric(inRaw.Seconds()/inStore.Seconds(), "x-of-raw")
			b.ReportMetric(float64(backlog.Load()), "max-pending")
			var p50, p99 float64
			if err := s.Pool().QueryRow(ctx, `SELECT percentile_cont(0.5) WITHIN GROUP (ORDER BY lag), percentile_cont(0.99) WITHIN GROUP (ORDER BY lag)
				FROM (SELECT 1000 * extract(epoch FROM integrated_at - at) AS lag FROM log_leaves
				      WHERE site = $1 AND kind = 'coupon' AND at >= $2) l`, site, start.UTC()).Scan(&p50, &p99); err == nil {
				b.ReportMetric(p50, "p50-index-ms")
				b.ReportMetric(p99, "p99-index-ms")
			}
		})
	}
}

// writeRound is how many writes of one kind run before the other kind's turn.
const writeRound = 250

// writeBenchSite returns the store and site BenchmarkCouponWriteConcurrent
// writes to: a fresh site of the package's database, or, with
// ETCHLOG_BENCH_WRITE_COUPONS=n, site "bench" of a database of its own
// holding n coupons (benchSite) with their current marks and a signed
// checkpoint over their leaves, so the sequencer carries on from there.
func writeBenchSite(b *testing.B) (*db.Store, string) {
	n, _ := strconv.Atoi(os.Getenv("ETCHLOG_BENCH_WRITE_COUPONS"))
	if n <= 0 {
		return dbtest.Store(b), dbtest.Site(b)
	}
	ctx := context.Background()
	start := time.Now()
	dbURL, conn, _ := benchSite(b, n)
	const site = "bench"
	if _, err := conn.Exec(ctx, `INSERT INTO current_marks (site, kind, mark, record_id)
		SELECT site, 'coupon_mark', coupon_mark, id FROM coupons WHERE site = $1`, site); err != nil {
		b.Fatal(err)
	}
	rows, _ := conn.Query(ctx, `SELECT leaf_hash FROM log_leaves WHERE site = $1 ORDER BY leaf_index`, site)
	rng := (&compact.RangeFactory{Hash: logfmt.HashChildren}).NewEmptyRange(0)
	var h []byte
	if _, err := pgx.ForEachRow(rows, []any{&h}, func() error { return rng.Append(h, nil) }); err != nil {
		b.Fatal(err)
	}
	root, err := rng.GetRootHash(nil)
	if err != nil {
		b.Fatal(err)
	}
	key, err := logfmt.NewSigner(dbtest.PrivateKey)
	if err != nil {
		b.Fatal(err)
	}
	cp, err := logfmt.SignCheckpoint(key, site, rng.End(), root)
	if err != nil {
		b.Fatal(err)
	}
	if _, err := conn.Exec(ctx, `INSERT INTO log_checkpoints (site, size, root, range_hashes, note, created_at)
		VALUES ($1, $2, $3, $4, $5, now())`, site, int64(rng.End()), root, rng.Hashes(), cp); err != nil {
		b.Fatal(err)
	}
	if _, err := conn.Exec(ctx, `SELECT setval('log_pending_seq_seq', $1)`, int64(n)); err != nil {
		b.Fatal(err)
	}
	if _, err := conn.Exec(ctx, `ANALYZE current_marks`); err != nil {
		b.Fatal(err)
	}
	s := dbtest.OpenApp(b, dbURL)
	seqCtx, stopSeq := context.WithCancel(ctx)
	done := make(chan struct{})
	go func() { defer close(done); _ = s.RunSequencer(seqCtx, db.SequencerOptions{}) }()
	b.Cleanup(func() { stopSeq(); <-done })
	b.Logf("seeded %d coupons in %v", n, time.Since(start).Round(time.Second))
	return s, site
}

// sampleBacklog records the largest number of pending leaves seen until stop.
func sampleBacklog(s *db.Store, stop chan struct{}, max *atomic.Int64) {
	t := time.NewTicker(5 * time.Millisecond)
	defer t.Stop()
	for {
		select {
		case <-stop:
			return
		case <-t.C:
		}
		var n int64
		if err := s.Pool().QueryRow(context.Background(), `SELECT count(*) FROM log_pending`).Scan(&n); err == nil && n > max.Load() {
			max.Store(n)
		}
	}
}
