package api_test

import (
	"net/http"
	"strings"
	"testing"
)

// procWindowReply is the part of a window answer these tests read.
type procWindowReply struct {
	Feasible          bool              `json:"feasible"`
	Basis             string            `json:"basis"`
	PenetrationSource string            `json:"penetration_source"`
	LimitsFrom        map[string]string `json:"limits_from"`
	Notes             []string          `json:"notes"`
	Cells             []struct {
		VoltageV float64 `json:"voltage_v"`
		Feasible bool    `json:"feasible"`
		CurrentA struct {
			Min      float64 `json:"min"`
			Max      float64 `json:"max"`
			MinLimit string  `json:"min_limit"`
		} `json:"current_a"`
	} `json:"cells"`
}

// TestProcedureWindow: a window for a procedure takes its derived ranges
// (structural-style set, from memory: current ±10 % of the PQR's 280 A is
// 252–308 A), the stricter minimum penetration and its calibration group,
// and says where each came from. Judged on the lower bound of the group's
// calibration (the default), the window is narrower than on the median.
func TestProcedureWindow(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(6, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	e.create("/v1/calibrations/"+cal.ID+"/activate", "engineer", map[string]any{"reason": "shop fit"})
	proc := e.rangedProcedure()
	body := map[string]any{"procedure_id": proc, "joint_type": "fillet", "min_penetration_mm": 2.6, "voltage_steps": 3, "travel_speed_steps": 3}
	lower := decode[procWindowReply](t, "window", e.do(http.MethodPost, "/v1/parameter-window", "auditor", body), http.StatusOK)
	med := clone(body)
	med["basis"] = "median"
	median := decode[procWindowReply](t, "window", e.do(http.MethodPost, "/v1/parameter-window", "auditor", med), http.StatusOK)
	if lower.Basis != "lower_bound" || median.Basis != "median" || lower.PenetrationSource != "calibration" {
		t.Errorf("basis %q / %q, source %q; want lower_bound by default, median when asked, from the calibration", lower.Basis, median.Basis, lower.PenetrationSource)
	}
	for _, f := range []string{"current_a", "voltage_v", "travel_speed_mm_s"} {
		if !strings.Contains(lower.LimitsFrom[f], "qualified ranges v1 of WPS-") {
			t.Errorf("limits_from[%s] = %q, want the procedure's ranges", f, lower.LimitsFrom[f])
		}
	}
	if !strings.Contains(lower.LimitsFrom["min_penetration_mm"], "request (stricter") || !strings.Contains(lower.LimitsFrom["process"], "rev 1") {
		t.Errorf("limits_from = %v, want the request's stricter minimum and the procedure's process", lower.LimitsFrom)
	}
	shrunk := false
	for i := range lower.Cells {
		l, m := lower.Cells[i].CurrentA, median.Cells[i].CurrentA
		if m.Min < 252-1e-9 || m.Max > 308+1e-9 {
			t.Errorf("cell %d: current %g–%g outside the qualified 252–308 A", i, m.Min, m.Max)
		}
		if l.Min < m.Min-1e-9 {
			t.Errorf("cell %d: lower-bound window starts at %g A, below the median one's %g A", i, l.Min, m.Min)
		}
		if l.Min > m.Min+1e-6 && l.MinLimit == "penetration_min" {
			shrunk = true
		}
	}
	if !shrunk {
		t.Errorf("the lower bound did not narrow any cell: %+v vs %+v", lower.Cells, median.Cells)
	}
	// A K without an interval can only be judged on the median.
	k := clone(body)
	k["basis"], k["jackson_k"] = "lower_bound", map[string]any{"value": 0.03, "units": "metric"}
	wantProblem(t, "lower bound with a K", e.do(http.MethodPost, "/v1/parameter-window", "auditor", k), http.StatusUnprocessableEntity, "basis")
}
