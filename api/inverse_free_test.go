package api_test

import (
	"net/http"
	"testing"

	"etchlog/predict"
)

// inverseReply is the part of an inverse penetration answer the tests read.
type inverseReply struct {
	CurrentA          float64 `json:"current_a"`
	VoltageV          float64 `json:"voltage_v"`
	TravelSpeedMMPerS float64 `json:"travel_speed_mm_s"`
	Penetration       struct {
		Source        string  `json:"source"`
		Model         string  `json:"model"`
		CalibrationID string  `json:"calibration_id"`
		PenetrationMM float64 `json:"penetration_mm"`
		Exponents     struct {
			Current     float64 `json:"current"`
			TravelSpeed float64 `json:"travel_speed"`
			Voltage     float64 `json:"voltage"`
		} `json:"exponents"`
	} `json:"penetration"`
	Notes []string `json:"notes"`
}

// inverseInGroup posts an inverse penetration solve over the fit group.
func (e *testEnv) inverseInGroup(solveFor string, given map[string]any) inverseReply {
	e.t.Helper()
	b := fitGroupBody()
	// These checks are of the median solve (the default with a calibration
	// is the interval's lower bound: TestProcedureInverse).
	b["solve_for"], b["penetration_mm"], b["basis"] = solveFor, 2.0, "median"
	for k, v := range given {
		b[k] = v
	}
	return decode[inverseReply](e.t, "POST /v1/inverse/penetration", e.do(http.MethodPost, "/v1/inverse/penetration", "auditor", b), http.StatusOK)
}

// activate activates a calibration as the engineer.
func (e *testEnv) activate(id string) {
	e.t.Helper()
	decode[map[string]any](e.t, "activate", e.do(http.MethodPost, "/v1/calibrations/"+id+"/activate", "engineer",
		map[string]any{"reason": "inverse fixture"}), http.StatusCreated)
}

// TestInversePenetrationUsesFreeCalibration stores the fit coupons
// (fixtures), activates a jackson_fixed calibration, then a jackson_free
// one, and checks which model each inverse solve uses. A jackson_free
// answer fed back through /v1/predictions for the group must give the
// 2 mm target as the median again.
func TestInversePenetrationUsesFreeCalibration(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(8, 0)
	fixed := e.fit(calibrationBody("jackson_fixed", nil))
	e.activate(fixed.ID)
	given := map[string]map[string]any{
		"current":      {"voltage_v": 20.0, "travel_speed_mm_s": 5.0},
		"voltage":      {"current_a": 180.0, "travel_speed_mm_s": 5.0},
		"travel_speed": {"current_a": 180.0, "voltage_v": 20.0},
	}
	t.Run("FixedWithoutFree", func(t *testing.T) {
		got := e.inverseInGroup("current", given["current"])
		k := predict.JacksonK{Value: e.storedFit(fixed.ID).Penetration.KMM, Units: predict.JacksonUnitsMetric}
		// The published Jackson form P = K·I^(4/3)·S^(−1/3)·V^(−2/3) (from memory)
		// with the group's fitted K, solved for I.
		want, err := predict.JacksonCurrentA(k, 2, 5, 20)
		if err != nil {
			t.Fatal(err)
		}
		if got.Penetration.Model != "jackson_fixed" || got.Penetration.CalibrationID != fixed.ID || got.CurrentA != answered(want) {
			t.Errorf("inverse = %v A from %s %s, want %v A from jackson_fixed %s", got.CurrentA,
				got.Penetration.Model, got.Penetration.CalibrationID, want, fixed.ID)
		}
	})
	free := e.fit(calibrationBody("jackson_free", nil))
	e.activate(free.ID)
	coef := free.Fit.Penetration.Coef
	for _, solve := range []string{"current", "voltage", "travel_speed"} {
		t.Run(solve, func(t *testing.T) {
			inv := e.inverseInGroup(solve, given[solve])
			p := inv.Penetration
			if p.Source != "calibration" || p.Model != "jackson_free" || p.CalibrationID != free.ID {
				t.Errorf("solved with %s %s %s, want calibration jackson_free %s", p.Source, p.Model, p.CalibrationID, free.ID)
			}
			if ex := p.Exponents; ex.Current != coef[1] || ex.TravelSpeed != coef[2] || ex.Voltage != coef[3] {
				t.Errorf("exponents = %+v, want the fit's %v", ex, coef[1:])
			}
			fb := fitGroupBody()
			fb["current_a"], fb["voltage_v"], fb["travel_speed_mm_s"] = inv.CurrentA, inv.VoltageV, inv.TravelSpeedMMPerS
			fwd := e.predictAs(fb)
			if fwd.Penetration.Model != "jackson_free" || fwd.Penetration.PenetrationMM == nil ||
				!relClose(*fwd.Penetration.PenetrationMM, 2, fwdRel) || !relClose(p.PenetrationMM, 2, fwdRel) {
				t.Errorf("solve %s → %v A, %v V, %v mm/s; forward median = %v mm (%s), inverse reports %v mm; want 2 mm within %g",
					solve, inv.CurrentA, inv.VoltageV, inv.TravelSpeedMMPerS, fwd.Penetration.PenetrationMM,
					fwd.Penetration.Model, p.PenetrationMM, fwdRel)
			}
		})
	}
	t.Run("GivenKUsedExactly", func(t *testing.T) {
		g := map[string]any{"voltage_v": 20.0, "travel_speed_mm_s": 5.0, "jackson_k": map[string]any{"value": 0.03, "units": "metric"}}
		got := e.inverseInGroup("current", g)
		if got.Penetration.Model != "jackson_fixed" || got.Penetration.Source != "request" || len(got.Notes) == 0 {
			t.Errorf("with jackson_k given: model %s, source %s, notes %v; want the request's K and a note that the calibration was not used",
				got.Penetration.Model, got.Penetration.Source, got.Notes)
		}
	})
}
