package db_test

import (
	"context"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// A power source whose coupons come out 15 % deeper than the calibration
// in use, while the group's other power sources do not, raises one drift
// flag naming it, from the coupon where its shift began, with the advice to
// check the machine; the flags stay derived (RecheckFlags), and the chart
// is what Store.Drift returns. Invented data: the check is the chart's own
// arithmetic (its ARL is checked in predict).
func TestDriftFlagNamesPowerSource(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p, err := s.CreateProcedure(ctx, a, procedureData("WPS-DRIFT-"+site[len(site)-6:]))
	if err != nil {
		t.Fatal(err)
	}
	storeFitCoupons(t, s, site, p.ID, 10)
	cal, err := s.CreateCalibration(ctx, a, spec(db.CalibrationJacksonFixed))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.ActivateCalibration(ctx, a, cal.ID, "fixture"); err != nil {
		t.Fatal(err)
	}
	var sinceMark string
	var lastID uuid.UUID
	var lastData db.CouponData
	for i := 0; i < 30; i++ {
		d := fitCoupon(p.ID, i%10)
		d.CouponMark = fmt.Sprintf("C-NEW-%02d", i)
		d.WeldedOn = db.DateOf(time.Date(2026, 11, 20+i/3, 0, 0, 0, 0, time.UTC))
		d.PowerSourceID = []string{"PS-1", "PS-2", "PS-3"}[i%3]
		secs := fitSections(d, i%10)
		if d.PowerSourceID == "PS-3" && i >= 12 {
			secs[0], secs[1] = secs[0]*1.15, secs[1]*1.15
			if sinceMark == "" {
				sinceMark = d.CouponMark
			}
		}
		c, err := s.CreateCoupon(ctx, a, d)
		if err != nil {
			t.Fatal(err)
		}
		lastID, lastData = c.ID, d
		for j, sec := range []string{"A", "B"} {
			m := measurementData(c.ID, sec, "accept")
			m.PenetrationMM = secs[j]
			if _, err := s.CreateMeasurement(ctx, a, m); err != nil {
				t.Fatal(err)
			}
		}
	}
	page, err := s.Flags(ctx, site, db.FlagFilter{Kind: "drift"}, "", 100)
	if err != nil {
		t.Fatal(err)
	}
	var ps3 *db.Flag
	for i, f := range page.Items {
		if f.Variable == "penetration_mm:power_source_id" {
			if *f.ValueText != "PS-3" {
				t.Errorf("drift flag on power source %s: %s", *f.ValueText, f.Detail)
			}
			ps3 = &page.Items[i]
		}
	}
	if ps3 == nil {
		t.Fatalf("no drift flag on a power source; flags: %+v", page.Items)
	}
	// The change-point estimate may land a couple of PS-3 coupons early: the
	// fixture's wobble is a sine, not noise.
	near := false
	for _, m := range []string{"C-NEW-08", "C-NEW-11", sinceMark, "C-NEW-17"} {
		near = near || strings.Contains(ps3.Detail, "since "+m+" ")
	}
	if !strings.Contains(ps3.Detail, "check the machine's calibration") || !near ||
		*ps3.Direction != "above" || *ps3.Value < 0.07 || *ps3.Value > 0.25 || ps3.Unit != "ln(mm)" {
		t.Errorf("PS-3 flag: value %g %s %s, detail %q; want about +0.14 ln(mm) above since about %s, advising a machine check",
			*ps3.Value, ps3.Unit, *ps3.Direction, ps3.Detail, sinceMark)
	}
	c, err := s.RecheckFlags(ctx, site)
	if err != nil || !c.OK() {
		t.Errorf("RecheckFlags = %+v, %v; want the stored drift flags exactly", c, err)
	}
	// A correction moves the last coupon to another power source: the charts follow in its transaction.
	lastData.PowerSourceID = "PS-1"
	if _, err := s.CorrectCoupon(ctx, a, lastID, db.Change{BaseRevision: 1, Reason: "power source misread"}, lastData); err != nil {
		t.Fatal(err)
	}
	if c, err := s.RecheckFlags(ctx, site); err != nil || !c.OK() {
		t.Errorf("RecheckFlags after a correction = %+v, %v; want the stored drift flags exactly", c, err)
	}
	rep, err := s.Drift(ctx, site, fitGroup, "penetration")
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.Coupons) != 30 || rep.CalibrationID != cal.ID {
		t.Errorf("drift report: %d coupons against %s, want 30 against %s", len(rep.Coupons), rep.CalibrationID, cal.ID)
	}
}
