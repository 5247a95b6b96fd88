package db_test

import (
	"context"
	"fmt"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
)

// BenchmarkCouponWriteCalibratedGroup creates coupons one at a time in a
// seeded group of ETCHLOG_BENCH_FIT_COUPONS coupons (default 20,000, by
// seedFitGroup) whose calibration, stored by its selection, is active, so
// that every create redraws the group's drift charts in its transaction.
// Side by side on the same database, alternating one of each:
//   - Store: Store.CreateCoupon as it runs (the calibration's fitted set
//     derived once per process and kept);
//   - StoreUncached: the same create with that set forgotten first, so the
//     create derives the calibration's selection again over the whole group
//     (what every such create did before the set was kept);
//   - RawInsert: a bare pgx INSERT of a comparable coupon row.
//
// It reports ms/op of each and the ratios raw/Store and raw/StoreUncached.
// go test ./db/ -run XXX -bench BenchmarkCouponWriteCalibratedGroup -benchtime 20x
func BenchmarkCouponWriteCalibratedGroup(b *testing.B) {
	fb := seedFitGroup(b, benchGroupSize(b))
	ctx, s, site := context.Background(), fb.s, fb.site
	var proc uuid.UUID
	if err := fb.conn.QueryRow(ctx, `SELECT id FROM procedures WHERE site = $1`, site).Scan(&proc); err != nil {
		b.Fatal(err)
	}
	cal, err := s.CreateCalibration(ctx, actor(site), fb.sp)
	if err != nil {
		b.Fatal(err)
	}
	if _, err := s.ActivateCalibration(ctx, actor(site), cal.ID, "bench: the group's calibration in use"); err != nil {
		b.Fatal(err)
	}
	var cached, uncached, raw time.Duration
	n := 0
	create := func(forget bool) time.Duration {
		n++
		d := fitCoupon(proc, n)
		d.CouponMark = fmt.Sprintf("BENCH-DRIFT-%d", n)
		if forget {
			db.ForgetFittedSetsForTest()
		}
		t := time.Now()
		if _, err := s.CreateCoupon(ctx, actor(site), d); err != nil {
			b.Fatal(err)
		}
		return time.Since(t)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		cached += create(false)
		uncached += create(true)
		c := fitCoupon(proc, n)
		t := time.Now()
		_, err := s.Pool().Exec(ctx, `
			INSERT INTO coupons (site, id, revision, created_at, created_by, procedure_id, coupon_mark,
				welder_id, welded_on, joint_type, thickness_mm, pass_number, current_a, voltage_v,
				travel_speed_mm_s, wire_diameter_mm, polarity, position)
			VALUES ($1, $2, 1, now(), 'bench', $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15)`,
			site+"-raw", uuid.New(), proc, fmt.Sprintf("BENCH-RAW-%d", i), c.WelderID, c.WeldedOn, c.JointType,
			c.ThicknessMM, c.PassNumber, c.CurrentA, c.VoltageV, c.TravelSpeedMMPerS, c.WireDiameterMM,
			c.Polarity, c.Position)
		if err != nil {
			b.Fatal(err)
		}
		raw += time.Since(t)
	}
	b.StopTimer()
	per := func(d time.Duration) float64 { return float64(d.Microseconds()) / 1000 / float64(b.N) }
	b.ReportMetric(per(cached), "store-ms/op")
	b.ReportMetric(per(uncached), "uncached-ms/op")
	b.ReportMetric(per(raw), "raw-ms/op")
	b.ReportMetric(per(raw)/per(cached), "x-of-raw")
	b.ReportMetric(per(raw)/per(uncached), "uncached-x-of-raw")
}
