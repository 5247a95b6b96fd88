package db_test

import (
	"context"
	"fmt"
	"testing"
	"time"

	"github.com/google/uuid"
)

// BenchmarkCouponWriteCalibratedGroup creates coupons one at a time in a
// seeded group of ETCHLOG_BENCH_FIT_COUPONS coupons (default 20,000, by
// seedFitGroup) whose calibration, stored by its selection, is active, so
// that every create updates the group's drift charts in its transaction.
// Side by side on the same database, alternating one of each:
//   - Store: Store.CreateCoupon as it runs (its own point judged, the
//     chart's other points read as stored);
//   - StoreRedraw: the same create with the chart's stored state removed
//     first (drift_charts, by a superuser), so the create draws the chart
//     again from every coupon of the group, as every such create did before
//     the points were kept (the fitted coupons still left out through
//     calibration_fitted);
//   - Uncalibrated: Store.CreateCoupon of the same coupon on a procedure of a
//     process no calibration was ever chosen for (no chart to update);
//   - RawInsert: a bare pgx INSERT of a comparable coupon row.
//
// It reports ms/op of each, the ratios raw/Store and raw/StoreRedraw, and
// Store against the uncalibrated create. A create now rewrites only the
// charts its coupon has a point on (newCouponDrift), and a new coupon has
// no sections, so no point on this group's penetration chart: Store and
// StoreRedraw no longer touch the chart: only the writes that move a point
// (a section, a correction, an import) update it.
// go test ./db/ -run XXX -bench BenchmarkCouponWriteCalibratedGroup -benchtime 10x
func BenchmarkCouponWriteCalibratedGroup(b *testing.B) {
	fb := seedFitGroup(b, benchGroupSize(b))
	ctx, s, site := context.Background(), fb.s, fb.site
	var proc uuid.UUID
	if err := fb.conn.QueryRow(ctx, `SELECT id FROM procedures WHERE site = $1`, site).Scan(&proc); err != nil {
		b.Fatal(err)
	}
	pd := procedureData("WPS-UNCAL")
	pd.Process = "FCAW"
	uncal, err := s.CreateProcedure(ctx, actor(site), pd)
	if err != nil {
		b.Fatal(err)
	}
	cal, err := s.CreateCalibration(ctx, actor(site), fb.sp)
	if err != nil {
		b.Fatal(err)
	}
	if _, err := s.ActivateCalibration(ctx, actor(site), cal.ID, "bench: the group's calibration in use"); err != nil {
		b.Fatal(err)
	}
	var kept, redrawn, plain, raw time.Duration
	n := 0
	create := func(redraw bool, on uuid.UUID) time.Duration {
		n++
		d := fitCoupon(on, n)
		d.CouponMark = fmt.Sprintf("BENCH-DRIFT-%d", n)
		if redraw {
			if _, err := fb.conn.Exec(ctx, `DELETE FROM drift_charts WHERE site = $1`, site); err != nil {
				b.Fatal(err)
			}
		}
		t := time.Now()
		if _, err := s.CreateCoupon(ctx, actor(site), d); err != nil {
			b.Fatal(err)
		}
		return time.Since(t)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		kept += create(false, proc)
		redrawn += create(true, proc)
		plain += create(false, uncal.ID)
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
	if chk, err := s.RecheckDrift(ctx, site); err != nil || !chk.OK() {
		b.Errorf("RecheckDrift after the writes = %+v, %v; want the stored chart exactly", chk, err)
	}
	per := func(d time.Duration) float64 { return float64(d.Microseconds()) / 1000 / float64(b.N) }
	b.ReportMetric(per(kept), "store-ms/op")
	b.ReportMetric(per(redrawn), "redraw-ms/op")
	b.ReportMetric(per(plain), "uncalibrated-ms/op")
	b.ReportMetric(per(raw), "raw-ms/op")
	b.ReportMetric(per(raw)/per(plain), "uncalibrated-x-of-raw")
	b.ReportMetric(per(kept)/per(plain), "store-per-uncalibrated")
	b.ReportMetric(per(raw)/per(kept), "x-of-raw")
	b.ReportMetric(per(raw)/per(redrawn), "redraw-x-of-raw")
}
