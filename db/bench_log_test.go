package db_test

import (
	"context"
	"fmt"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// BenchmarkCouponWriteConcurrent compares coupon writes through the Store
// (transaction, link checks, mark claim, revision row, pending leaf, flags)
// with the baseline of a raw pgx INSERT of the same columns in one
// transaction, at 8 and 32 concurrent clients on the same pool and
// database, side by side. Compare the ns/op figures as a ratio. The Store
// runs also report the sequencer's largest pending backlog (sampled every
// 5 ms) and the p50/p99 delay from a write's commit time to its log index,
// which is when it appears in lists.
func BenchmarkCouponWriteConcurrent(b *testing.B) {
	s := dbtest.Store(b)
	ctx := context.Background()
	var n atomic.Int64 // marks stay unique across the benchmark's repeated runs
	for _, clients := range []int{8, 32} {
		site := dbtest.Site(b) + fmt.Sprint(clients)
		p, err := s.CreateProcedure(ctx, actor(site), procedureData(fmt.Sprintf("WPS-BC-%d", clients)))
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("Store/c=%d", clients), func(b *testing.B) {
			stop := make(chan struct{})
			var backlog atomic.Int64
			go sampleBacklog(s, stop, &backlog)
			start := time.Now()
			concurrently(b, clients, func() error {
				_, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("B-C-%d", n.Add(1))))
				return err
			})
			b.StopTimer()
			close(stop)
			if err := s.AwaitLogged(ctx, site); err != nil {
				b.Fatal(err)
			}
			b.ReportMetric(float64(backlog.Load()), "max-pending")
			var p50, p99 float64
			if err := s.Pool().QueryRow(ctx, `SELECT percentile_cont(0.5) WITHIN GROUP (ORDER BY lag), percentile_cont(0.99) WITHIN GROUP (ORDER BY lag)
				FROM (SELECT 1000 * extract(epoch FROM integrated_at - at) AS lag FROM log_leaves
				      WHERE site = $1 AND kind = 'coupon' AND at >= $2) l`, site, start.UTC()).Scan(&p50, &p99); err == nil {
				b.ReportMetric(p50, "p50-index-ms")
				b.ReportMetric(p99, "p99-index-ms")
			}
		})
		b.Run(fmt.Sprintf("RawInsert/c=%d", clients), func(b *testing.B) {
			c := couponData(p.ID, "")
			concurrently(b, clients, func() error {
				tx, err := s.Pool().Begin(ctx)
				if err != nil {
					return err
				}
				defer tx.Rollback(ctx) //nolint:errcheck // no-op after Commit
				if _, err := tx.Exec(ctx, `
					INSERT INTO coupons (site, id, revision, created_at, created_by, reason, voided, procedure_id,
						qualification_record_id, coupon_mark, welder_id, power_source_id, filler_lot, welded_on,
						joint_type, thickness_mm, pass_number, current_a, voltage_v, travel_speed_mm_s,
						wire_feed_speed_m_min, ctwd_mm, wire_diameter_mm, shielding_gas, polarity, position,
						preheat_c, interpass_c)
					VALUES ($1, $2, 1, now(), 'bench', '', false, $3, NULL, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13,
						$14, $15, $16, $17, $18, $19, $20, $21, $22)`,
					site+"-raw", uuid.New(), p.ID, fmt.Sprintf("B-R-%d", n.Add(1)), c.WelderID, c.PowerSourceID, c.FillerLot,
					c.WeldedOn, c.JointType, c.ThicknessMM, c.PassNumber, c.CurrentA, c.VoltageV, c.TravelSpeedMMPerS,
					c.WireFeedSpeedMPerMin, c.CTWDMM, c.WireDiameterMM, c.ShieldingGas, c.Polarity, c.Position,
					c.PreheatC, c.InterpassC); err != nil {
					return err
				}
				return tx.Commit(ctx)
			})
		})
	}
}

// concurrently runs b.N calls of fn spread over the given number of clients.
func concurrently(b *testing.B, clients int, fn func() error) {
	b.Helper()
	var next atomic.Int64
	var wg sync.WaitGroup
	var failed atomic.Value
	b.ResetTimer()
	for range clients {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for next.Add(1) <= int64(b.N) {
				if err := fn(); err != nil {
					failed.Store(err)
					return
				}
			}
		}()
	}
	wg.Wait()
	if err, _ := failed.Load().(error); err != nil {
		b.Fatal(err)
	}
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
