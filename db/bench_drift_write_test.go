package db_test

import (
	"context"
	"fmt"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
)

// BenchmarkCouponWriteCalibratedGroup writes, one at a time, the first
// section of a new coupon in a seeded group of ETCHLOG_BENCH_FIT_COUPONS
// coupons (default 20,000, by seedFitGroup) whose penetration calibration,
// stored by its selection, is active: the section gives the coupon its
// point on the group's penetration chart, so the write updates the chart in
// its transaction. A section is what a shop writes most in such a group:
// every coupon is cut and etched, while a melting chart needs a calibration
// of its own and coupons with wire feed speed and CTWD. Side by side on the
// same database, alternating one of each:
//   - Store: Store.CreateMeasurement as it runs (the coupon's point judged,
//     the chart's other points read as stored);
//   - StoreRedraw: the same write with the chart's stored state removed
//     first (drift_charts, by a superuser), so the write draws the chart
//     again from every coupon of the group, as every such write did before
//     the points were kept (the fitted coupons still left out through
//     calibration_fitted);
//   - Uncalibrated: Store.CreateMeasurement of the same section on a coupon
//     of a process no calibration was ever chosen for (no chart to update);
//   - RawInsert: a bare pgx INSERT of a comparable measurement row.
//
// The coupons are created just before their sections, by Store.CreateCoupon;
// the creates in the calibrated group (no point on its chart: a create
// leaves the chart alone) are timed too, against a raw INSERT of a
// comparable coupon row. It reports ms/op of each, the ratios raw/Store,
// raw/StoreRedraw and raw/Uncalibrated, Store against the uncalibrated
// write, and the create's ratio. At the end every section written in the
// calibrated group must have its point on the chart, and the stored chart
// must be what RecheckDrift draws from the records.
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
	var kept, redrawn, plain, raw, created, rawCreated time.Duration
	n := 0
	timed := func(f func() error) time.Duration {
		t := time.Now()
		if err := f(); err != nil {
			b.Fatal(err)
		}
		return time.Since(t)
	}
	// coupon creates coupon n on procedure on; section writes its first section.
	coupon := func(on uuid.UUID) (c db.Coupon, d time.Duration) {
		n++
		cd := fitCoupon(on, n)
		cd.CouponMark = fmt.Sprintf("BENCH-DRIFT-%d", n)
		d = timed(func() (err error) { c, err = s.CreateCoupon(ctx, actor(site), cd); return err })
		return c, d
	}
	section := func(c db.Coupon, redraw bool) time.Duration {
		m := measurementData(c.ID, "A", "accept")
		m.PenetrationMM = fitSections(c.CouponData, n)[0]
		if redraw {
			if _, err := fb.conn.Exec(ctx, `DELETE FROM drift_charts WHERE site = $1`, site); err != nil {
				b.Fatal(err)
			}
		}
		return timed(func() error { _, err := s.CreateMeasurement(ctx, actor(site), m); return err })
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		c, d := coupon(proc)
		created += d
		kept += section(c, false)
		c, d = coupon(proc)
		created += d
		redrawn += section(c, true)
		c, _ = coupon(uncal.ID)
		plain += section(c, false)
		rc, rm := fitCoupon(proc, n), measurementData(uuid.New(), "A", "accept")
		rm.PenetrationMM = fitSections(rc, n)[0]
		rawCreated += timed(func() error {
			_, err := s.Pool().Exec(ctx, `
				INSERT INTO coupons (site, id, revision, created_at, created_by, procedure_id, coupon_mark,
					welder_id, welded_on, joint_type, thickness_mm, pass_number, current_a, voltage_v,
					travel_speed_mm_s, wire_diameter_mm, polarity, position)
				VALUES ($1, $2, 1, now(), 'bench', $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15)`,
				site+"-raw", rm.CouponID, proc, fmt.Sprintf("BENCH-RAW-%d", i), rc.WelderID, rc.WeldedOn, rc.JointType,
				rc.ThicknessMM, rc.PassNumber, rc.CurrentA, rc.VoltageV, rc.TravelSpeedMMPerS, rc.WireDiameterMM,
				rc.Polarity, rc.Position)
			return err
		})
		raw += timed(func() error {
			_, err := s.Pool().Exec(ctx, `
				INSERT INTO measurements (site, id, revision, created_at, created_by, coupon_id, section,
					penetration_mm, bead_width_mm, reinforcement_mm, leg1_mm, leg2_mm, acceptance, inspector)
				VALUES ($1, $2, 1, now(), 'bench', $3, $4, $5, $6, $7, $8, $9, $10, $11)`,
				site+"-raw", uuid.New(), rm.CouponID, rm.Section, rm.PenetrationMM, rm.BeadWidthMM,
				rm.ReinforcementMM, rm.Leg1MM, rm.Leg2MM, rm.Acceptance, rm.Inspector)
			return err
		})
	}
	b.StopTimer()
	var points int
	if err := fb.conn.QueryRow(ctx, `SELECT count(*) FROM drift_points WHERE site = $1`, site).Scan(&points); err != nil {
		b.Fatal(err)
	}
	if points != 2*b.N {
		b.Errorf("%d points on the group's charts after %d sections in the calibrated group, want one each", points, 2*b.N)
	}
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
	b.ReportMetric(per(created)/2, "create-ms/op")
	b.ReportMetric(per(rawCreated), "raw-create-ms/op")
	b.ReportMetric(per(rawCreated)/(per(created)/2), "create-x-of-raw")
}
