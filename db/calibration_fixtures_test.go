package db_test

import (
	"context"
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/predict"
)

// The coupons below spread current, voltage, travel speed and CTWD so every
// model can be fitted; their penetrations follow a power law with a fixed
// wobble. They are fixtures for storage round trips, not reference data.

// fitGroup is the calibration group of the fixture coupons (couponData's).
var fitGroup = db.CalibrationGroup{Process: "GMAW", WireDiameterMM: 0.9, ShieldingGas: "Ar-25CO2", JointType: "fillet"}

// fitCoupon returns the i-th fixture coupon on the procedure, welded on day
// 2026-11-01 + i.
func fitCoupon(procedureID uuid.UUID, i int) db.CouponData {
	c := couponData(procedureID, fmt.Sprintf("C-FIT-%s-%03d", procedureID.String()[:8], i))
	c.WeldedOn = db.DateOf(time.Date(2026, 11, 1+i, 0, 0, 0, 0, time.UTC))
	c.CurrentA = 150 + 10*float64(i%5)
	c.VoltageV = 19 + float64(i%3)
	c.TravelSpeedMMPerS = 4 + 0.5*float64(i%4)
	c.CTWDMM = ptr(12 + 2*float64(i%3))
	c.WireFeedSpeedMPerMin = ptr(4 + 0.03*(c.CurrentA-150) + 0.1*(*c.CTWDMM-12) + 0.01*float64(i%2))
	return c
}

// fitSections returns the two fixture section penetrations (mm) of coupon c.
func fitSections(c db.CouponData, i int) [2]float64 {
	p := 0.025 * c.CurrentA * math.Cbrt(c.CurrentA/(c.TravelSpeedMMPerS*c.VoltageV*c.VoltageV))
	w := 1 + 0.04*math.Sin(float64(i))
	return [2]float64{p * w, p * w * 1.03}
}

// storedCoupon is a fixture coupon as stored, with what a fit should see of it.
type storedCoupon struct {
	id       uuid.UUID
	data     db.CouponData
	sections [2]float64
}

// penetrationSample is the sample a fit should build: the mean of the two sections.
func (c storedCoupon) penetrationSample() predict.PenetrationSample {
	return predict.PenetrationSample{ID: c.id.String(), CurrentA: c.data.CurrentA, VoltageV: c.data.VoltageV,
		TravelSpeedMMPerS: c.data.TravelSpeedMMPerS, PenetrationMM: (c.sections[0] + c.sections[1]) / 2}
}

// meltingSample is the Lesnewich sample a fit should build with arc length arcMM.
func (c storedCoupon) meltingSample(tb testing.TB, arcMM float64) predict.MeltingSample {
	tb.Helper()
	mr, err := predict.WireMeltingRateKgPerH(*c.data.WireFeedSpeedMPerMin, *c.data.WireDiameterMM, predict.CarbonSteelDensityKgPerMM3)
	if err != nil {
		tb.Fatal(err)
	}
	return predict.MeltingSample{ID: c.id.String(), CurrentA: c.data.CurrentA, ExtensionMM: *c.data.CTWDMM - arcMM, MeltingRateKgPerH: mr}
}

// storeFitCoupons stores n fixture coupons with two sections each on the procedure.
func storeFitCoupons(tb testing.TB, s *db.Store, site string, procedureID uuid.UUID, n int) []storedCoupon {
	tb.Helper()
	ctx := context.Background()
	out := make([]storedCoupon, n)
	for i := range out {
		d := fitCoupon(procedureID, i)
		c, err := s.CreateCoupon(ctx, actor(site), d)
		if err != nil {
			tb.Fatalf("CreateCoupon %d: %v", i, err)
		}
		out[i] = storedCoupon{id: c.ID, data: d, sections: fitSections(d, i)}
		for j, sec := range []string{"A", "B"} {
			m := measurementData(c.ID, sec, "accept")
			m.PenetrationMM = out[i].sections[j]
			if _, err := s.CreateMeasurement(ctx, actor(site), m); err != nil {
				tb.Fatalf("CreateMeasurement %d%s: %v", i, sec, err)
			}
		}
	}
	return out
}

// spec returns a calibration spec over the fixture group.
func spec(model db.CalibrationModel) db.CalibrationSpec {
	return db.CalibrationSpec{Model: model, Process: fitGroup.Process, WireDiameterMM: fitGroup.WireDiameterMM,
		ShieldingGas: fitGroup.ShieldingGas, JointType: fitGroup.JointType, Level: 0.95}
}
