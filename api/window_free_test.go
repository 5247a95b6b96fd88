package api_test

import (
	"net/http"
	"testing"
)

// holdReply is the part of a hold-penetration answer the tests read.
type holdReply struct {
	NewCurrentA              float64 `json:"new_current_a"`
	PenetrationSource        string  `json:"penetration_source"`
	PenetrationModel         string  `json:"penetration_model"`
	PenetrationCalibrationID string  `json:"penetration_calibration_id"`
	Exponents                struct {
		Current     float64 `json:"current"`
		TravelSpeed float64 `json:"travel_speed"`
		Voltage     float64 `json:"voltage"`
	} `json:"exponents"`
}

// windowFreeReply adds the model of the penetration limit to windowReply.
type windowFreeReply struct {
	windowReply
	PenetrationModel string `json:"penetration_model"`
}

// groupWindowBody is windowBody over the fit group, without jackson_k.
func groupWindowBody() map[string]any {
	b := windowBody(2, 40)
	delete(b, "jackson_k")
	for k, v := range fitGroupBody() {
		b[k] = v
	}
	return b
}

// holdInGroup posts a hold-penetration solve over the fit group: 180 A,
// 21 → 22.5 V, 12 → 15 in/min (fixture setting).
func (e *testEnv) holdInGroup() holdReply {
	e.t.Helper()
	b := fitGroupBody()
	b["current_a"], b["voltage_v"], b["new_voltage_v"] = 180.0, 21.0, 22.5
	b["travel_speed_in_min"], b["new_travel_speed_in_min"] = 12.0, 15.0
	return decode[holdReply](e.t, "POST /v1/inverse/hold-penetration", e.do(http.MethodPost, "/v1/inverse/hold-penetration", "auditor", b), http.StatusOK)
}

// TestWindowAndHoldUseFreeCalibration stores the fit coupons (fixtures),
// activates a jackson_fixed calibration, then a jackson_free one, and
// checks which model the window and the hold use. With jackson_free, the
// window's nominal point fed back through /v1/predictions for the group
// must meet the 2 mm minimum, and the held current must give the median of
// the starting setting again.
func TestWindowAndHoldUseFreeCalibration(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(8, 0)
	fixed := e.fit(calibrationBody("jackson_fixed", nil))
	e.activate(fixed.ID)
	t.Run("FixedOnly", func(t *testing.T) {
		w := decode[windowFreeReply](t, "window", e.do(http.MethodPost, "/v1/parameter-window", "auditor", groupWindowBody()), http.StatusOK)
		if w.PenetrationModel != "jackson_fixed" || w.PenetrationCalibrationID != fixed.ID {
			t.Errorf("window penetration model = %s %s, want jackson_fixed %s", w.PenetrationModel, w.PenetrationCalibrationID, fixed.ID)
		}
		h := e.holdInGroup()
		// Published Jackson exponents 4/3, −1/3, −2/3 (from memory).
		if h.PenetrationModel != "jackson_fixed" || h.PenetrationSource != "published" || h.PenetrationCalibrationID != "" ||
			h.Exponents.Current != answered(4.0/3) {
			t.Errorf("hold model = %s %s %q exponents %+v, want the published jackson", h.PenetrationSource,
				h.PenetrationModel, h.PenetrationCalibrationID, h.Exponents)
		}
	})
	free := e.fit(calibrationBody("jackson_free", nil))
	e.activate(free.ID)
	coef := free.Fit.Penetration.Coef
	t.Run("WindowNominal", func(t *testing.T) {
		w := decode[windowFreeReply](t, "window", e.do(http.MethodPost, "/v1/parameter-window", "auditor", groupWindowBody()), http.StatusOK)
		if w.PenetrationSource != "calibration" || w.PenetrationModel != "jackson_free" || w.PenetrationCalibrationID != free.ID {
			t.Fatalf("window penetration = %s %s %s, want calibration jackson_free %s", w.PenetrationSource, w.PenetrationModel,
				w.PenetrationCalibrationID, free.ID)
		}
		if !w.Feasible || w.Nominal == nil {
			t.Fatalf("window feasible %v, nominal %v; want a nominal point", w.Feasible, w.Nominal)
		}
		n := w.Nominal
		fb := fitGroupBody()
		fb["current_a"], fb["voltage_v"], fb["travel_speed_mm_s"] = n.CurrentA, n.VoltageV, n.TravelSpeedMMPerS
		fwd := e.predictAs(fb)
		if fwd.Penetration.Model != "jackson_free" || fwd.Penetration.PenetrationMM == nil ||
			*fwd.Penetration.PenetrationMM < 2 || !relClose(*fwd.Penetration.PenetrationMM, n.PenetrationMM, fwdRel) {
			t.Errorf("nominal %v A, %v V, %v mm/s: forward median %v mm (%s), window says %v mm; want the same and ≥ 2 mm",
				n.CurrentA, n.VoltageV, n.TravelSpeedMMPerS, fwd.Penetration.PenetrationMM, fwd.Penetration.Model, n.PenetrationMM)
		}
	})
	t.Run("Hold", func(t *testing.T) {
		h := e.holdInGroup()
		if h.PenetrationSource != "calibration" || h.PenetrationModel != "jackson_free" || h.PenetrationCalibrationID != free.ID ||
			h.Exponents.Current != coef[1] || h.Exponents.TravelSpeed != coef[2] || h.Exponents.Voltage != coef[3] {
			t.Errorf("hold model = %s %s %s exponents %+v, want calibration jackson_free %s %v", h.PenetrationSource,
				h.PenetrationModel, h.PenetrationCalibrationID, h.Exponents, free.ID, coef[1:])
		}
		before, after := fitGroupBody(), fitGroupBody()
		before["current_a"], before["voltage_v"], before["travel_speed_in_min"] = 180.0, 21.0, 12.0
		after["current_a"], after["voltage_v"], after["travel_speed_in_min"] = h.NewCurrentA, 22.5, 15.0
		p1, p2 := e.predictAs(before).Penetration, e.predictAs(after).Penetration
		if p1.Model != "jackson_free" || p2.Model != "jackson_free" || p1.PenetrationMM == nil || p2.PenetrationMM == nil ||
			!relClose(*p2.PenetrationMM, *p1.PenetrationMM, fwdRel) {
			t.Fatalf("hold → %v A: median %v mm (%s), want %v mm (%s) as before within %g", h.NewCurrentA,
				p2.PenetrationMM, p2.Model, p1.PenetrationMM, p1.Model, fwdRel)
		}
	})
	t.Run("HoldGroupWithoutWire", func(t *testing.T) {
		r := e.do(http.MethodPost, "/v1/inverse/hold-penetration", "auditor", map[string]any{"current_a": 180, "voltage_v": 21,
			"new_voltage_v": 22.5, "travel_speed_mm_s": 5, "process": "GMAW", "joint_type": "fillet"})
		wantProblem(t, "group without wire diameter", r, http.StatusBadRequest, "wire_diameter_mm")
	})
}
