package db_test

import (
	"context"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestModelFlags fits a fixed-exponent Jackson calibration (predict's fit)
// to three fixture coupons welded at one setting with sections of 1.9, 2.0
// and 2.1 mm, activates it, and checks the model flags: a new coupon whose
// section measures 4.0 mm lies above the 95 % prediction interval, and
// with a required minimum of 2.5 mm every coupon's predicted median
// (about 2.0 mm) is below it.
func TestModelFlags(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	pd := p.ProcedureData
	pd.MinPenetrationMM = ptr(2.5)
	if _, err := s.CorrectProcedure(ctx, a, p.ID, db.Change{BaseRevision: 1, Reason: "customer asks 2.5 mm"}, pd); err != nil {
		t.Fatal(err)
	}
	section := func(c uuid.UUID, mm float64) {
		t.Helper()
		m := measurementData(c, "A", "accept")
		m.PenetrationMM = mm
		if _, err := s.CreateMeasurement(ctx, a, m); err != nil {
			t.Fatal(err)
		}
	}
	var first uuid.UUID
	for i, mm := range []float64{1.9, 2.0, 2.1} {
		c, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, "M"+string(rune('0'+i))+p.Code, 200, 24))
		if err != nil {
			t.Fatal(err)
		}
		section(c.ID, mm)
		if i == 0 {
			first = c.ID
		}
	}
	g := db.CalibrationGroup{Process: "GMAW", WireDiameterMM: 1.2, ShieldingGas: "Ar-10CO2", JointType: "fillet"}
	cal, err := s.CreateCalibration(ctx, a, db.CalibrationSpec{Model: db.CalibrationJacksonFixed, Process: g.Process,
		WireDiameterMM: g.WireDiameterMM, ShieldingGas: g.ShieldingGas, JointType: g.JointType, Level: 0.95})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.ActivateCalibration(ctx, a, cal.ID, "first fit"); err != nil {
		t.Fatal(err)
	}
	if err := s.RecomputeGroupForTest(ctx, site, g); err != nil {
		t.Fatal(err)
	}
	count := func(variable string) int {
		t.Helper()
		n := 0
		for _, f := range procedureFlags(t, s, site, p.ID) {
			if f.Variable == variable && f.Kind == "model" {
				n++
			}
		}
		return n
	}
	if n := count("predicted_penetration_mm"); n != 3 {
		t.Errorf("after activation: %d predicted-below-minimum flags, want 3", n)
	}
	if n := count("penetration_mm"); n != 0 {
		t.Errorf("after activation: %d outside-interval flags on the fitted coupons, want 0", n)
	}
	odd, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, "M9"+p.Code, 200, 24))
	if err != nil {
		t.Fatal(err)
	}
	section(odd.ID, 4.0) // the measurement write recomputes its coupon's flags
	flags := flagsByKey(procedureFlags(t, s, site, p.ID))
	f, ok := flags[flagKey{odd.ID, "penetration_mm", "model"}]
	if !ok || *f.Direction != "above" || *f.Value != 4.0 || *f.Max >= 4.0 {
		t.Fatalf("4.0 mm coupon: flag %+v, want model above the prediction interval", f)
	}
	if _, ok := flags[flagKey{first, "penetration_mm", "model"}]; ok {
		t.Error("a fitted coupon is flagged outside its own calibration's interval")
	}
}
