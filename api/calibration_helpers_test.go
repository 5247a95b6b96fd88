package api_test

import (
	"encoding/json"
	"fmt"
	"math"
	"net/http"
	"testing"

	"etchlog/db"
	"etchlog/predict"
)

// The fit coupons below spread current, voltage, travel speed and CTWD so
// every model can be fitted; their penetrations follow a power law with a
// fixed wobble. They are fixtures for storage and HTTP round trips, not
// reference data. Their group is couponBody's: GMAW (the procedure's),
// 0.9 mm wire, Ar-25CO2, fillet.

// fitGroupBody is the group of the fit coupons as request fields.
func fitGroupBody() map[string]any {
	return map[string]any{"process": "GMAW", "wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2", "joint_type": "fillet"}
}

// fitCoupon is one stored fit coupon: its id, the values sent and its two
// sections' penetrations (mm).
type fitCoupon struct {
	id                         string
	currentA, voltageV, speedS float64
	wfsMPerMin, ctwdMM         float64
	sections                   [2]float64
}

// penetrationSample is the sample the service should fit: the coupon with
// the mean of its two sections.
func (c fitCoupon) penetrationSample() predict.PenetrationSample {
	return predict.PenetrationSample{ID: c.id, CurrentA: c.currentA, VoltageV: c.voltageV,
		TravelSpeedMMPerS: c.speedS, PenetrationMM: (c.sections[0] + c.sections[1]) / 2}
}

// meltingSample is the Lesnewich sample the service should fit with arc length arcMM.
func (c fitCoupon) meltingSample(tb testing.TB, arcMM float64) predict.MeltingSample {
	tb.Helper()
	mr, err := predict.WireMeltingRateKgPerH(c.wfsMPerMin, 0.9, predict.CarbonSteelDensityKgPerMM3)
	if err != nil {
		tb.Fatal(err)
	}
	return predict.MeltingSample{ID: c.id, CurrentA: c.currentA, ExtensionMM: c.ctwdMM - arcMM, MeltingRateKgPerH: mr}
}

// storeFitCoupons records n fit coupons with two sections each through the
// API, welded on 2026-11-01 + i; current is fixed at oneCurrentA when > 0.
func (e *testEnv) storeFitCoupons(n int, oneCurrentA float64) []fitCoupon {
	e.t.Helper()
	proc := e.mustProcedure()
	out := make([]fitCoupon, n)
	for i := range out {
		c := fitCoupon{currentA: 150 + 10*float64(i%5), voltageV: 19 + float64(i%3), speedS: 4 + 0.5*float64(i%4),
			ctwdMM: 12 + 2*float64(i%3)}
		if oneCurrentA > 0 {
			c.currentA = oneCurrentA
		}
		c.wfsMPerMin = 4 + 0.03*(c.currentA-150) + 0.1*(c.ctwdMM-12) + 0.01*float64(i%2)
		p := 0.025 * c.currentA * math.Cbrt(c.currentA/(c.speedS*c.voltageV*c.voltageV)) * (1 + 0.04*math.Sin(float64(i)))
		c.sections = [2]float64{p, p * 1.03}
		b := couponBody(proc, "", uniq("C-FIT"))
		b["current_a"], b["voltage_v"], b["travel_speed_mm_s"] = c.currentA, c.voltageV, c.speedS
		b["wire_feed_speed_m_min"], b["ctwd_mm"] = c.wfsMPerMin, c.ctwdMM
		b["welded_on"] = fmt.Sprintf("2026-11-%02d", 1+i)
		c.id = e.create("/v1/coupons", "technician", b)["id"].(string)
		for j, sec := range []string{"A", "B"} {
			m := measurementBody(sec)
			m["penetration_mm"] = c.sections[j]
			e.create("/v1/coupons/"+c.id+"/measurements", "technician", m)
		}
		out[i] = c
	}
	return out
}

// calibrationBody is a fit request over the fit group.
func calibrationBody(model string, extra map[string]any) map[string]any {
	b := fitGroupBody()
	b["model"] = model
	for k, v := range extra {
		b[k] = v
	}
	return b
}

// calibrationReply is the part of a calibration answer the tests compare.
type calibrationReply struct {
	ID          string                 `json:"id"`
	Model       string                 `json:"model"`
	Active      bool                   `json:"active"`
	Fit         db.CalibrationFit      `json:"fit"`
	Samples     *db.CalibrationSamples `json:"samples"`
	CouponIDs   []string               `json:"coupon_ids"`
	Diagnostics *predict.Diagnostics   `json:"diagnostics"`
	Activations []map[string]any       `json:"activations"`
	Caution     string                 `json:"caution"`
}

// decode unmarshals an answer that must have the given status into v.
func decode[T any](tb testing.TB, what string, r reply, status int) T {
	tb.Helper()
	var v T
	if r.status != status {
		tb.Fatalf("%s: status = %d, want %d (body %s)", what, r.status, status, r.body)
	}
	if err := json.Unmarshal(r.body, &v); err != nil {
		tb.Fatalf("%s: decode: %v: %s", what, err, r.body)
	}
	return v
}

// fit posts a fit request as an engineer and returns the stored calibration.
func (e *testEnv) fit(body map[string]any) calibrationReply {
	e.t.Helper()
	return decode[calibrationReply](e.t, "POST /v1/calibrations", e.do(http.MethodPost, "/v1/calibrations", "engineer", body), http.StatusCreated)
}

// relClose reports whether got is within rel of want, relative to |want|.
func relClose(got, want, rel float64) bool { return math.Abs(got-want) <= rel*math.Abs(want) }
