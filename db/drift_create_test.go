package db_test

import (
	"context"
	"fmt"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestNewCouponLocksOnlyItsCharts holds the penetration chart's lock in
// another session while coupons are created in the group, with a
// penetration and a melting calibration in use. A new coupon has no
// sections, so no point on the penetration chart: each create must commit
// without that lock (when every create took every chart lock of its group,
// these waited until the timeout). The one with a wire feed speed and a
// CTWD joins the melting chart; the one without joins neither. Afterwards
// the stored charts and the flags must equal their derivation from the
// records (RecheckDrift, RecheckFlags).
func TestNewCouponLocksOnlyItsCharts(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p, err := s.CreateProcedure(ctx, a, procedureData("WPS-NC-"+site[len(site)-6:]))
	if err != nil {
		t.Fatal(err)
	}
	storeFitCoupons(t, s, site, p.ID, 10)
	ms := spec(db.CalibrationLesnewich)
	ms.ArcLengthMM = ptr(3.5)
	for _, sp := range []db.CalibrationSpec{spec(db.CalibrationJacksonFixed), ms} {
		c, err := s.CreateCalibration(ctx, a, sp)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := s.ActivateCalibration(ctx, a, c.ID, "fixture"); err != nil {
			t.Fatal(err)
		}
	}
	su, err := pgx.Connect(ctx, dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	defer su.Close(ctx)
	points := func() map[string]int {
		t.Helper()
		rows, _ := su.Query(ctx, `SELECT d.drift_group, (SELECT count(*) FROM drift_points p WHERE p.site = d.site AND p.drift_group = d.drift_group)
			FROM drift_charts d WHERE d.site = $1`, site)
		out := map[string]int{}
		var k string
		var n int
		if _, err := pgx.ForEachRow(rows, []any{&k, &n}, func() error { out[k] = n; return nil }); err != nil {
			t.Fatal(err)
		}
		return out
	}
	before := points()
	penetration, melting := "penetration|GMAW|0.900|Ar-25CO2|fillet", "melting|GMAW|0.900|Ar-25CO2|fillet"
	_, okP := before[penetration]
	if _, okM := before[melting]; !okP || !okM {
		t.Fatalf("stored charts %v: want %q and %q", before, penetration, melting)
	}

	tx, err := su.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := tx.Exec(ctx, `SELECT pg_advisory_xact_lock(hashtextextended('etchlog-drift:' || $1 || ':' || $2, 0))`, site, penetration); err != nil {
		t.Fatal(err)
	}
	wctx, cancel := context.WithTimeout(ctx, 10*time.Second)
	for i, withCTWD := range []bool{false, true} {
		d := fitCoupon(p.ID, 3)
		d.CouponMark = fmt.Sprintf("NC-%d", i)
		d.WeldedOn = db.DateOf(time.Date(2026, 11, 25+i, 0, 0, 0, 0, time.UTC))
		if !withCTWD {
			d.CTWDMM = nil
		}
		if _, err := s.CreateCoupon(wctx, a, d); err != nil {
			t.Errorf("create %s while the penetration chart is locked: %v", d.CouponMark, err)
		}
	}
	cancel()
	if err := tx.Rollback(ctx); err != nil {
		t.Fatal(err)
	}

	after := points()
	if after[penetration] != before[penetration] || after[melting] != before[melting]+1 {
		t.Errorf("points per chart %v, then %v: want the penetration chart's unchanged and one more on the melting chart", before, after)
	}
	c, err := s.RecheckDrift(ctx, site)
	if err != nil || !c.OK() {
		t.Errorf("RecheckDrift = %+v, %v; want the stored charts exactly", c, err)
	}
	f, err := s.RecheckFlags(ctx, site)
	if err != nil || !f.OK() {
		t.Errorf("RecheckFlags = %+v, %v; want the stored flags exactly", f, err)
	}
}
