package api_test

import (
	"net/http"
	"testing"
)

// The coefficients and targets below are plausible magnitudes for GMAW on
// carbon steel, used as fixtures: each inverse answer is checked by feeding
// it back through the forward endpoint, which must give the target again.

// fwdRel is how close a forward value must come back to its target.
const fwdRel = 1e-9

// TestInversePenetrationReproducesForward solves for each quantity and
// checks that /v1/predictions at the solution gives the target penetration.
func TestInversePenetrationReproducesForward(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	k := map[string]any{"value": 0.0019, "units": "inch"}
	given := map[string]map[string]any{
		"current":      {"voltage_v": 23.0, "travel_speed_in_min": 10.0},
		"voltage":      {"current_a": 150.0, "travel_speed_in_min": 10.0},
		"travel_speed": {"current_a": 150.0, "voltage_v": 23.0},
	}
	for _, solve := range []string{"current", "voltage", "travel_speed"} {
		t.Run(solve, func(t *testing.T) {
			body := map[string]any{"solve_for": solve, "penetration_in": 0.09, "jackson_k": k}
			for f, v := range given[solve] {
				body[f] = v
			}
			inv := decode[struct {
				CurrentA          float64 `json:"current_a"`
				VoltageV          float64 `json:"voltage_v"`
				TravelSpeedMMPerS float64 `json:"travel_speed_mm_s"`
				Penetration       struct {
					PenetrationIn float64 `json:"penetration_in"`
				} `json:"penetration"`
			}](t, "inverse penetration", e.do(http.MethodPost, "/v1/inverse/penetration", "auditor", body), http.StatusOK)
			fwd := e.predictAs(map[string]any{"current_a": inv.CurrentA, "voltage_v": inv.VoltageV,
				"travel_speed_mm_s": inv.TravelSpeedMMPerS, "jackson_k": k})
			if fwd.Penetration.PenetrationIn == nil || !relClose(*fwd.Penetration.PenetrationIn, 0.09, fwdRel) ||
				!relClose(inv.Penetration.PenetrationIn, 0.09, fwdRel) {
				t.Errorf("solve %s → %v A, %v V, %v mm/s; forward penetration = %v in, want 0.09 in within %g", solve,
					inv.CurrentA, inv.VoltageV, inv.TravelSpeedMMPerS, fwd.Penetration.PenetrationIn, fwdRel)
			}
		})
	}
	t.Run("ErrSolvedQuantityGiven", func(t *testing.T) {
		body := map[string]any{"solve_for": "current", "penetration_mm": 2, "current_a": 150, "voltage_v": 23, "travel_speed_mm_s": 4, "jackson_k": k}
		wantProblem(t, "current given while solving for it", e.do(http.MethodPost, "/v1/inverse/penetration", "auditor", body), http.StatusBadRequest, "current_a")
	})
	t.Run("ErrNoK", func(t *testing.T) {
		body := map[string]any{"solve_for": "current", "penetration_mm": 2, "voltage_v": 23, "travel_speed_mm_s": 4}
		wantProblem(t, "no K", e.do(http.MethodPost, "/v1/inverse/penetration", "auditor", body), http.StatusBadRequest, "jackson_k")
	})
}

// TestHoldPenetrationReproducesForward checks that the new current gives,
// through /v1/predictions with any K, the penetration of the old setting.
func TestHoldPenetrationReproducesForward(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	hold := decode[struct {
		NewCurrentA float64 `json:"new_current_a"`
	}](t, "hold penetration", e.do(http.MethodPost, "/v1/inverse/hold-penetration", "auditor", map[string]any{
		"current_a": 180, "voltage_v": 21, "new_voltage_v": 22.5, "travel_speed_in_min": 12, "new_travel_speed_in_min": 15}), http.StatusOK)
	k := map[string]any{"value": 0.03, "units": "metric"}
	before := e.predictAs(map[string]any{"current_a": 180, "voltage_v": 21, "travel_speed_in_min": 12, "jackson_k": k})
	after := e.predictAs(map[string]any{"current_a": hold.NewCurrentA, "voltage_v": 22.5, "travel_speed_in_min": 15, "jackson_k": k})
	if !relClose(*after.Penetration.PenetrationMM, *before.Penetration.PenetrationMM, fwdRel) {
		t.Errorf("hold → %v A: penetration %v mm, want %v mm as before within %g", hold.NewCurrentA,
			*after.Penetration.PenetrationMM, *before.Penetration.PenetrationMM, fwdRel)
	}
	t.Run("ErrNoChange", func(t *testing.T) {
		r := e.do(http.MethodPost, "/v1/inverse/hold-penetration", "auditor", map[string]any{"current_a": 180, "voltage_v": 21, "travel_speed_mm_s": 5})
		wantProblem(t, "no change", r, http.StatusBadRequest, "new_travel_speed_mm_s")
	})
}

// TestCurrentForDepositionReproducesForward solves for the current that gives
// a target rate at a stick-out and checks the forward Lesnewich value there.
func TestCurrentForDepositionReproducesForward(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	les := map[string]any{"alpha_kg_h_a": 0.0095, "beta_kg_h_a2_mm": 4.5e-6}
	for _, tc := range []struct {
		name, field string
		target      float64
		forward     func(predictionReply) float64
	}{
		{"DepositionKgH", "deposition_rate_kg_h", 3.2, func(p predictionReply) float64 { return p.Lesnewich.DepositionRateKgH }},
		{"MeltingLbH", "melting_rate_lb_h", 7.5, func(p predictionReply) float64 { return p.Lesnewich.MeltingRateKgH / 0.45359237 }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			body := map[string]any{tc.field: tc.target, "deposition_efficiency": 0.95, "ctwd_in": 0.75, "arc_length_mm": 3, "lesnewich": les}
			inv := decode[struct {
				CurrentA float64 `json:"current_a"`
			}](t, "current for deposition", e.do(http.MethodPost, "/v1/inverse/current-for-deposition", "auditor", body), http.StatusOK)
			fwd := e.predictAs(map[string]any{"current_a": inv.CurrentA, "voltage_v": 28, "travel_speed_mm_s": 6,
				"ctwd_in": 0.75, "arc_length_mm": 3, "deposition_efficiency": 0.95, "lesnewich": les})
			if fwd.Lesnewich == nil || !relClose(tc.forward(fwd), tc.target, fwdRel) {
				t.Errorf("%s %v → %v A; forward %+v, want the target back within %g", tc.field, tc.target, inv.CurrentA, fwd.Lesnewich, fwdRel)
			}
		})
	}
	t.Run("ErrTwoTargets", func(t *testing.T) {
		body := map[string]any{"melting_rate_kg_h": 3, "deposition_rate_kg_h": 3, "deposition_efficiency": 0.95, "extension_mm": 12, "lesnewich": les}
		wantProblem(t, "two targets", e.do(http.MethodPost, "/v1/inverse/current-for-deposition", "auditor", body), http.StatusBadRequest, "melting_rate_kg_h")
	})
	t.Run("ErrNoCoefficients", func(t *testing.T) {
		body := map[string]any{"melting_rate_kg_h": 3, "extension_mm": 12}
		wantProblem(t, "no coefficients", e.do(http.MethodPost, "/v1/inverse/current-for-deposition", "auditor", body), http.StatusBadRequest, "lesnewich")
	})
}
