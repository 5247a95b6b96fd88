package api_test

import (
	"net/http"
	"strings"
	"testing"
)

// TestLesnewichInchPoundCoefficients sends the same Lesnewich coefficients
// once in kg/(h·A), kg/(h·A²·mm) and once in lb/(h·A), lb/(h·A²·in); the
// melting rate must agree (1 lb = 0.45359237 kg, 1 in = 25.4 mm exactly,
// NIST SP 811). Mixing a metric α with an inch β is fine; giving α twice is not.
func TestLesnewichInchPoundCoefficients(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	base := map[string]any{"current_a": 250, "voltage_v": 27, "travel_speed_mm_s": 6, "ctwd_mm": 19, "arc_length_mm": 4}
	metric := clone(base)
	metric["lesnewich"] = map[string]any{"alpha_kg_h_a": 0.0317 * 0.45359237, "beta_kg_h_a2_mm": 1.85e-4 * 0.45359237 / 25.4}
	inch := clone(base)
	inch["lesnewich"] = map[string]any{"alpha_lb_h_a": 0.0317, "beta_lb_h_a2_in": 1.85e-4}
	m, i := e.predictAs(metric), e.predictAs(inch)
	if m.Lesnewich == nil || i.Lesnewich == nil {
		t.Fatalf("no Lesnewich answer: metric %+v, inch %+v", m.Lesnewich, i.Lesnewich)
	}
	if !relClose(i.Lesnewich.MeltingRateKgH, m.Lesnewich.MeltingRateKgH, 1e-12) {
		t.Errorf("melting rate from lb coefficients = %.15g kg/h, from kg ones %.15g", i.Lesnewich.MeltingRateKgH, m.Lesnewich.MeltingRateKgH)
	}
	both := clone(base)
	both["lesnewich"] = map[string]any{"alpha_lb_h_a": 0.0317, "alpha_kg_h_a": 0.0144, "beta_lb_h_a2_in": 1.85e-4}
	r := e.do(http.MethodPost, "/v1/predictions", "auditor", both)
	if r.status != http.StatusBadRequest || !strings.Contains(string(r.body), "lesnewich.alpha_kg_h_a") {
		t.Errorf("alpha twice: %d %s, want 400 naming lesnewich.alpha_kg_h_a", r.status, r.body)
	}
}
