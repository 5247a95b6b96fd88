package db_test

import (
	"context"
	"fmt"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestDriftPointsAreDerived checks that the drift charts a write keeps
// (drift_points, drift_charts) and the fitted sets (calibration_fitted) are
// exactly what RecheckDrift draws again from the records, after every kind
// of write that moves a point: new coupons welded after and between the
// charted ones, a section added, an import, a correction of the power source, a
// correction out of the group, a void, another calibration activated,
// an older calibration whose fitted set was not stored, a deactivation. It
// also checks that the drift flags stay derived (RecheckFlags) and that a
// stored point changed behind the service's back is found. What is compared
// is the chart's derivation from the records, the code every drift flag
// came from before the points were kept; the statistic's own arithmetic is
// checked in predict against its published run lengths.
func TestDriftPointsAreDerived(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p, err := s.CreateProcedure(ctx, a, procedureData("WPS-DP-"+site[len(site)-6:]))
	if err != nil {
		t.Fatal(err)
	}
	storeFitCoupons(t, s, site, p.ID, 10)
	fixed, err := s.CreateCalibration(ctx, a, spec(db.CalibrationJacksonFixed))
	if err != nil {
		t.Fatal(err)
	}
	free, err := s.CreateCalibration(ctx, a, spec(db.CalibrationJacksonFree))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.ActivateCalibration(ctx, a, fixed.ID, "fixture"); err != nil {
		t.Fatal(err)
	}
	check := func(when string, wantPoints int) {
		t.Helper()
		c, err := s.RecheckDrift(ctx, site)
		if err != nil {
			t.Fatalf("%s: RecheckDrift: %v", when, err)
		}
		if !c.OK() {
			t.Errorf("%s: RecheckDrift problems: %q", when, c.Problems)
		}
		if c.Points != wantPoints {
			t.Errorf("%s: %d stored points, want %d", when, c.Points, wantPoints)
		}
		f, err := s.RecheckFlags(ctx, site)
		if err != nil || !f.OK() {
			t.Errorf("%s: RecheckFlags = %+v, %v; want the stored flags exactly", when, f, err)
		}
	}
	check("after the activation", 0)
	type made struct {
		id   uuid.UUID
		data db.CouponData
	}
	var cs []made
	add := func(i int, day int, ps string, sections bool) {
		t.Helper()
		d := fitCoupon(p.ID, i%10)
		d.CouponMark = fmt.Sprintf("DP-%02d", i)
		d.WeldedOn = db.DateOf(time.Date(2026, 11, day, 0, 0, 0, 0, time.UTC))
		d.PowerSourceID = ps
		c, err := s.CreateCoupon(ctx, a, d)
		if err != nil {
			t.Fatal(err)
		}
		cs = append(cs, made{c.ID, d})
		if !sections {
			return
		}
		secs := fitSections(d, i%10)
		for j, sec := range []string{"A", "B"} {
			m := measurementData(c.ID, sec, "accept")
			m.PenetrationMM = secs[j] * (1 + 0.02*float64(i%4))
			if _, err := s.CreateMeasurement(ctx, a, m); err != nil {
				t.Fatal(err)
			}
		}
	}
	for i := range 8 {
		add(i, 20+i, []string{"PS-1", "PS-2"}[i%2], true)
	}
	add(8, 22, "PS-1", true)   // welded between charted coupons
	add(9, 5, "PS-2", true)    // welded before every charted coupon
	add(10, 29, "PS-1", false) // no section yet: not on the chart
	check("after new coupons", 10)

	m := measurementData(cs[10].id, "A", "accept")
	m.PenetrationMM = 3.1
	if _, err := s.CreateMeasurement(ctx, a, m); err != nil {
		t.Fatal(err)
	}
	check("after a section", 11)

	// An import joins the chart too, in its own transaction.
	var in []db.ImportCoupon
	for i := range 2 {
		d := fitCoupon(p.ID, 3+i)
		d.CouponMark = fmt.Sprintf("DP-IMP-%d", i)
		d.WeldedOn = db.DateOf(time.Date(2026, 11, 24, 0, 0, 0, 0, time.UTC))
		secs := fitSections(d, 3+i)
		ic := db.ImportCoupon{Row: 2 + i, Data: d}
		for j, sec := range []string{"A", "B"} {
			m := measurementData(uuid.Nil, sec, "accept")
			m.PenetrationMM = secs[j] * 1.05
			ic.Sections = append(ic.Sections, db.ImportSection{Row: 2 + i, Data: m})
		}
		in = append(in, ic)
	}
	if res, err := s.ImportCoupons(ctx, a, in, true); err != nil || res.Refused != 0 {
		t.Fatalf("import: %+v, %v", res, err)
	}
	check("after an import", 13)

	d := cs[3].data
	d.PowerSourceID = "PS-3"
	if _, err := s.CorrectCoupon(ctx, a, cs[3].id, db.Change{BaseRevision: 1, Reason: "power source misread"}, d); err != nil {
		t.Fatal(err)
	}
	d = cs[4].data
	d.ShieldingGas = "Ar-8CO2"
	if _, err := s.CorrectCoupon(ctx, a, cs[4].id, db.Change{BaseRevision: 1, Reason: "gas was mixed wrong"}, d); err != nil {
		t.Fatal(err)
	}
	if _, err := s.VoidCoupon(ctx, a, cs[5].id, db.Change{BaseRevision: 1, Reason: "cut wrong"}); err != nil {
		t.Fatal(err)
	}
	check("after corrections and a void", 11)

	// Another calibration in use: its chart replaces the first one's.
	if _, err := s.ActivateCalibration(ctx, a, free.ID, "free exponents"); err != nil {
		t.Fatal(err)
	}
	check("after activating another calibration", 11)

	// A calibration whose fitted set is not stored (as one created before the
	// sets were kept) and a chart not stored yet: the next write derives both.
	su := superuser(t)
	for _, q := range []string{`DELETE FROM calibration_fitted WHERE site = $1`, `DELETE FROM calibration_fitted_sets WHERE site = $1`,
		`DELETE FROM drift_points WHERE site = $1`, `DELETE FROM drift_charts WHERE site = $1`} {
		if _, err := su.Exec(ctx, q, site); err != nil {
			t.Fatal(err)
		}
	}
	rep, err := s.Drift(ctx, site, fitGroup, "penetration")
	if err != nil || len(rep.Coupons) != 11 {
		t.Errorf("Drift with nothing stored: %d coupons, %v; want the 11 drawn from the records", len(rep.Coupons), err)
	}
	add(11, 30, "PS-2", true)
	check("after a write drew the chart again", 12)

	// A point changed behind the service's back is found.
	if _, err := su.Exec(ctx, `UPDATE drift_points SET residual = residual + 0.01 WHERE site = $1 AND coupon_id = $2`, site, cs[0].id); err != nil {
		t.Fatal(err)
	}
	if c, err := s.RecheckDrift(ctx, site); err != nil || c.OK() {
		t.Errorf("RecheckDrift after a point was changed = %+v, %v; want a problem", c, err)
	}
	if _, err := s.CorrectCoupon(ctx, a, cs[0].id, db.Change{BaseRevision: 1, Reason: "welder id"}, cs[0].data); err != nil {
		t.Fatal(err)
	}
	check("after the coupon was written again", 12)

	if _, err := s.DeactivateCalibration(ctx, a, free.ID, "withdrawn"); err != nil {
		t.Fatal(err)
	}
	var left int
	if err := su.QueryRow(ctx, `SELECT (SELECT count(*) FROM drift_points WHERE site = $1) + (SELECT count(*) FROM drift_charts WHERE site = $1)`,
		site).Scan(&left); err != nil || left != 0 {
		t.Errorf("after deactivating: %d stored chart rows (%v), want none", left, err)
	}
	check("after deactivating", 0)
}
