package api_test

import (
	"net/http"
	"slices"
	"testing"
)

// windowReply is the part of a window answer the tests read.
type windowReply struct {
	Feasible      bool     `json:"feasible"`
	BindingLimits []string `json:"binding_limits"`
	Nominal       *struct {
		CurrentA          float64 `json:"current_a"`
		VoltageV          float64 `json:"voltage_v"`
		TravelSpeedMMPerS float64 `json:"travel_speed_mm_s"`
		PenetrationMM     float64 `json:"penetration_mm"`
		HeatInputJMM      float64 `json:"heat_input_j_mm"`
	} `json:"nominal"`
	Infeasible *struct {
		Message string `json:"message"`
	} `json:"infeasible"`
	Cells                    []map[string]any `json:"cells"`
	PenetrationSource        string           `json:"penetration_source"`
	PenetrationCalibrationID string           `json:"penetration_calibration_id"`
	Caution                  string           `json:"caution"`
}

func rng(lo, hi float64) map[string]any { return map[string]any{"min": lo, "max": hi} }

// windowBody is a fixture window: ranges of a GMAW fillet procedure and a
// minimum penetration with a Jackson K of plausible magnitude.
func windowBody(minPenMM, maxHeatKJIn float64) map[string]any {
	return map[string]any{"current_a": rng(150, 260), "voltage_v": rng(20, 26), "travel_speed_in_min": rng(10, 16),
		"voltage_steps": 4, "travel_speed_steps": 4, "min_penetration_mm": minPenMM,
		"jackson_k": map[string]any{"value": 0.025, "units": "metric"}, "max_heat_input_kj_in": maxHeatKJIn}
}

// TestWindowInfeasibleNamesBindingLimits asks for more penetration than the
// heat input limit allows: 200 with feasible false and both limits named.
func TestWindowInfeasibleNamesBindingLimits(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	got := decode[windowReply](t, "window", e.do(http.MethodPost, "/v1/parameter-window", "auditor", windowBody(6, 12)), http.StatusOK)
	if got.Feasible || got.Nominal != nil || got.Infeasible == nil || got.Infeasible.Message == "" {
		t.Fatalf("window = feasible %v nominal %v infeasible %v, want infeasible with a message", got.Feasible, got.Nominal, got.Infeasible)
	}
	if !slices.Equal(got.BindingLimits, []string{"penetration_min", "heat_input_max"}) {
		t.Errorf("binding limits = %v, want [penetration_min heat_input_max]", got.BindingLimits)
	}
	if len(got.Cells) != 16 || got.Caution == "" {
		t.Errorf("%d cells, caution %q; want the 4×4 grid and a caution", len(got.Cells), got.Caution)
	}
}

// TestWindowFeasibleNominal checks the nominal point through the forward
// endpoint: it meets the penetration minimum and the heat input maximum.
func TestWindowFeasibleNominal(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	got := decode[windowReply](t, "window", e.do(http.MethodPost, "/v1/parameter-window", "auditor", windowBody(2, 40)), http.StatusOK)
	if !got.Feasible || got.Nominal == nil || len(got.BindingLimits) == 0 {
		t.Fatalf("window = feasible %v nominal %v binding %v, want a nominal point and its nearest limits", got.Feasible, got.Nominal, got.BindingLimits)
	}
	n := got.Nominal
	fwd := e.predictAs(map[string]any{"current_a": n.CurrentA, "voltage_v": n.VoltageV, "travel_speed_mm_s": n.TravelSpeedMMPerS,
		"jackson_k": map[string]any{"value": 0.025, "units": "metric"}})
	if p := *fwd.Penetration.PenetrationMM; !relClose(p, n.PenetrationMM, 1e-9) || p < 2 {
		t.Errorf("forward penetration at the nominal point = %v mm, want %v mm and at least 2 mm", p, n.PenetrationMM)
	}
	if !relClose(fwd.ArcEnergyKJIn, n.HeatInputJMM*25.4/1000, 1e-9) || fwd.ArcEnergyKJIn > 40 {
		t.Errorf("forward arc energy at the nominal point = %v kJ/in, want %v and at most 40", fwd.ArcEnergyKJIn, n.HeatInputJMM*25.4/1000)
	}
	if n.CurrentA < 150 || n.CurrentA > 260 || n.VoltageV < 20 || n.VoltageV > 26 {
		t.Errorf("nominal %v A, %v V outside the qualified ranges", n.CurrentA, n.VoltageV)
	}
}

// TestWindowBadInput checks that refused windows name the field.
func TestWindowBadInput(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	with := func(k string, v any) map[string]any { b := windowBody(2, 40); b[k] = v; return b }
	for _, tc := range []struct {
		name   string
		body   map[string]any
		status int
		field  string
	}{
		{"ErrMinAboveMax", with("current_a", rng(260, 150)), http.StatusUnprocessableEntity, "current_a.min"},
		{"ErrImplausibleRange", with("voltage_v", rng(20, 600)), http.StatusUnprocessableEntity, "voltage_v"},
		{"ErrTooManySteps", with("voltage_steps", 30), http.StatusUnprocessableEntity, "voltage_steps"},
		{"ErrDepositionWithoutEfficiency", with("deposition_rate_kg_h", rng(2, 4)), http.StatusBadRequest, "deposition_efficiency"},
		{"ErrPenetrationWithoutK", with("jackson_k", nil), http.StatusBadRequest, "jackson_k"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			wantProblem(t, tc.name, e.do(http.MethodPost, "/v1/parameter-window", "auditor", tc.body), tc.status, tc.field)
		})
	}
}

// TestWindowUsesActiveCalibration checks that a group with an active
// jackson_fixed calibration supplies K without jackson_k.
func TestWindowUsesActiveCalibration(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(5, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	e.do(http.MethodPost, "/v1/calibrations/"+cal.ID+"/activate", "engineer", map[string]any{"reason": "fixture"})
	body := windowBody(1.5, 40)
	delete(body, "jackson_k")
	for k, v := range fitGroupBody() {
		body[k] = v
	}
	got := decode[windowReply](t, "window", e.do(http.MethodPost, "/v1/parameter-window", "auditor", body), http.StatusOK)
	if got.PenetrationSource != "calibration" || got.PenetrationCalibrationID != cal.ID {
		t.Errorf("penetration source = %s %s, want calibration %s", got.PenetrationSource, got.PenetrationCalibrationID, cal.ID)
	}
}
