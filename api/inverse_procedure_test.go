package api_test

import (
	"math"
	"net/http"
	"strings"
	"testing"
)

// procInverseReply is the part of an inverse answer these tests read.
type procInverseReply struct {
	CurrentA              float64           `json:"current_a"`
	Basis                 string            `json:"basis"`
	LowerBoundMM          *float64          `json:"lower_bound_mm"`
	PenetrationLevel      *float64          `json:"penetration_level"`
	LimitsFrom            map[string]string `json:"limits_from"`
	WithinQualifiedRanges *bool             `json:"within_qualified_ranges"`
	Outside               []string          `json:"outside_qualified_ranges"`
	Penetration           struct {
		Source        string   `json:"source"`
		PenetrationMM *float64 `json:"penetration_mm"`
	} `json:"penetration"`
}

// TestProcedureInverse: solving for current on a procedure takes its
// minimum penetration (1 mm) as the target and its group for the
// calibration; judged on the lower bound (the default with a calibration)
// the fit's own interval at the answer puts the lower bound on the target
// and the median above it, so the current is higher than the median solve's.
// The answer says whether the current lies inside the qualified 252–308 A
// (structural-style set from memory: ±10 % of the PQR's 280 A).
func TestProcedureInverse(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(6, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	e.create("/v1/calibrations/"+cal.ID+"/activate", "engineer", map[string]any{"reason": "shop fit"})
	proc := e.rangedProcedure()
	body := map[string]any{"procedure_id": proc, "joint_type": "fillet", "solve_for": "current", "voltage_v": 29, "travel_speed_mm_s": 6}
	lower := decode[procInverseReply](t, "inverse", e.do(http.MethodPost, "/v1/inverse/penetration", "auditor", body), http.StatusOK)
	med := clone(body)
	med["basis"] = "median"
	median := decode[procInverseReply](t, "inverse", e.do(http.MethodPost, "/v1/inverse/penetration", "auditor", med), http.StatusOK)
	if lower.Basis != "lower_bound" || median.Basis != "median" || lower.Penetration.Source != "calibration" {
		t.Fatalf("basis %q / %q, source %q; want lower_bound by default, median when asked, from the calibration", lower.Basis, median.Basis, lower.Penetration.Source)
	}
	if !(lower.CurrentA > median.CurrentA) {
		t.Errorf("lower-bound current %g A, median current %g A; want more current on the safe side", lower.CurrentA, median.CurrentA)
	}
	iv, err := cal.Fit.Penetration.Predict(lower.CurrentA, 29, 6, *lower.PenetrationLevel)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(iv.PredLowMM-1) > 1e-9 || lower.LowerBoundMM == nil || math.Abs(*lower.LowerBoundMM-1) > 1e-9 {
		t.Errorf("at %g A the interval's lower bound is %.12g mm (answer %v), want the 1 mm the procedure requires", lower.CurrentA, iv.PredLowMM, lower.LowerBoundMM)
	}
	if !strings.Contains(lower.LimitsFrom["penetration_mm"], "WPS-") || lower.LimitsFrom["shielding_gas"] == "" {
		t.Errorf("limits_from = %v, want the procedure's minimum and gas", lower.LimitsFrom)
	}
	inside := lower.CurrentA >= 252 && lower.CurrentA <= 308
	if lower.WithinQualifiedRanges == nil || *lower.WithinQualifiedRanges != inside || (!inside && len(lower.Outside) == 0) {
		t.Errorf("current %g A: within_qualified_ranges %v (%v), want %v against 252–308 A", lower.CurrentA, lower.WithinQualifiedRanges, lower.Outside, inside)
	}
	// A target that needs far more current lands outside the ranges, and says so.
	deep := clone(body)
	deep["penetration_mm"] = 5.0
	got := decode[procInverseReply](t, "inverse", e.do(http.MethodPost, "/v1/inverse/penetration", "auditor", deep), http.StatusOK)
	if got.WithinQualifiedRanges == nil || *got.WithinQualifiedRanges || len(got.Outside) == 0 || !strings.Contains(got.Outside[0], "current_a") {
		t.Errorf("5 mm target: %g A, within %v, outside %v; want outside the current range", got.CurrentA, got.WithinQualifiedRanges, got.Outside)
	}
}
