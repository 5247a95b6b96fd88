package api_test

import (
	"encoding/json"
	"net/http"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"

	"etchlog/db"
	"etchlog/predict"
)

// TestCalibrationFitThroughAPI checks the plumbing of a fit over coupons
// stored through the API: the stored coefficients equal predict's fit of the
// same samples bit for bit, after the jsonb and the HTTP JSON round trips,
// and so do the diagnostics. (The regression statistics themselves are
// checked against gonum and NIST StRD in package predict.)
func TestCalibrationFitThroughAPI(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	cs := e.storeFitCoupons(8, 0)
	var pen []predict.PenetrationSample
	var mel []predict.MeltingSample
	for _, c := range cs {
		pen = append(pen, c.penetrationSample())
		mel = append(mel, c.meltingSample(t, 3.5))
	}
	fixed, err := predict.FitPenetrationFixed(pen)
	if err != nil {
		t.Fatal(err)
	}
	free, err := predict.FitPenetrationFree(pen)
	if err != nil {
		t.Fatal(err)
	}
	melt, err := predict.FitMeltingRate(mel)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		model string
		extra map[string]any
		want  db.CalibrationFit
		diag  func() (predict.Diagnostics, error)
	}{
		{"jackson_fixed", nil, db.CalibrationFit{Penetration: &fixed},
			func() (predict.Diagnostics, error) {
				return predict.DiagnosePenetration(pen, predict.ModelJacksonFixed, 0.9)
			}},
		{"jackson_free", nil, db.CalibrationFit{Penetration: &free},
			func() (predict.Diagnostics, error) {
				return predict.DiagnosePenetration(pen, predict.ModelJacksonFree, 0.9)
			}},
		{"lesnewich", map[string]any{"arc_length_mm": 3.5}, db.CalibrationFit{Melting: &melt},
			func() (predict.Diagnostics, error) { return predict.DiagnoseMeltingRate(mel, 0.9) }},
	} {
		t.Run(tc.model, func(t *testing.T) {
			extra := map[string]any{"level": 0.9, "note": "fixture fit"}
			for k, v := range tc.extra {
				extra[k] = v
			}
			created := e.fit(calibrationBody(tc.model, extra))
			read := decode[calibrationReply](t, "GET calibration", e.do(http.MethodGet, "/v1/calibrations/"+created.ID, "auditor", nil), http.StatusOK)
			// The explicit check answers the same calibration, its samples re-derived and matching.
			checked := decode[map[string]any](t, "GET calibration?check=samples",
				e.do(http.MethodGet, "/v1/calibrations/"+created.ID+"?check=samples", "auditor", nil), http.StatusOK)
			if sc, _ := checked["sample_check"].(map[string]any); sc["finding"] != "matches" {
				t.Errorf("check=samples: sample_check %v, want finding matches", checked["sample_check"])
			}
			if r := e.do(http.MethodGet, "/v1/calibrations/"+created.ID+"?check=everything", "auditor", nil); r.status != http.StatusUnprocessableEntity {
				t.Errorf("check=everything = %d %s, want 422 (a value refused)", r.status, r.body)
			}
			wantDiag, err := tc.diag()
			if err != nil {
				t.Fatal(err)
			}
			// The store keeps the streamed fit (predict's PenetrationStream,
			// MeltingStream: a one-pass QR), which agrees with predict's
			// whole-group QR to rounding, not bit for bit: to 1e-12 relative
			// (seen: 4e-13 on a covariance entry made small by cancellation),
			// the identifiability correlations (|r| ≤ 1) to 1e-12 absolute.
			// Answers carry the stored fit to 12 significant digits.
			stored := e.storedFit(created.ID)
			if d := cmp.Diff(tc.want, stored, cmpopts.EquateApprox(1e-12, 0), cmpopts.IgnoreFields(predict.PenetrationFit{}, "Identifiability")); d != "" {
				t.Errorf("stored fit (-predict +stored):\n%s", d)
			}
			if p := stored.Penetration; p != nil {
				if d := cmp.Diff(tc.want.Penetration.Identifiability, p.Identifiability, cmpopts.EquateApprox(1e-12, 1e-12)); d != "" {
					t.Errorf("stored identifiability (-predict +stored):\n%s", d)
				}
			}
			var wantFit db.CalibrationFit
			if b, err := json.Marshal(stored); err != nil || json.Unmarshal(b, &wantFit) != nil {
				t.Fatalf("copy the fit: %v", err)
			}
			answeredAll(&wantFit)
			answeredAll(&wantDiag)
			for name, got := range map[string]calibrationReply{"POST answer": created, "GET answer": read} {
				if d := cmp.Diff(wantFit, got.Fit); d != "" {
					t.Errorf("%s fit (-predict as answered +served):\n%s", name, d)
				}
				// Both coefficient forms: 1 lb = 0.45359237 kg, 1 in = 25.4 mm (NIST SP 811),
				// converted from the stored fit and carried to 12 significant digits.
				if m, s := got.Fit.Melting, stored.Melting; m != nil && s != nil && (!to12Digits(m.AlphaLbPerHA, s.AlphaKgPerHA/0.45359237) ||
					!to12Digits(m.BetaLbPerHA2In, s.BetaKgPerHA2MM/0.45359237*25.4)) {
					t.Errorf("%s inch-pound α, β = %v, %v, want %v, %v", name, m.AlphaLbPerHA, m.BetaLbPerHA2In,
						s.AlphaKgPerHA/0.45359237, s.BetaKgPerHA2MM/0.45359237*25.4)
				}
				if got.Diagnostics == nil {
					t.Errorf("%s has no diagnostics", name)
				} else if d := cmp.Diff(wantDiag, *got.Diagnostics); d != "" {
					t.Errorf("%s diagnostics (-predict as answered +served):\n%s", name, d)
				}
				if len(got.CouponIDs) != len(cs) || got.CouponIDs[0] != cs[0].id || got.Caution == "" {
					t.Errorf("%s coupon ids = %v, caution %q; want the %d coupons in creation order and a caution", name, got.CouponIDs, got.Caution, len(cs))
				}
			}
		})
	}
	list := e.do(http.MethodGet, "/v1/calibrations?model=jackson_free&wire_diameter_mm=0.9", "auditor", nil).items(t)
	if len(list) != 1 || list[0]["samples"] != nil {
		t.Errorf("list of jackson_free = %d items (first samples %v), want 1 without samples", len(list), list)
	}
	v := e.do(http.MethodGet, "/v1/audit/verify", "auditor", nil).object(t)
	ev := e.do(http.MethodGet, "/v1/audit/events?entity=calibration", "auditor", nil).items(t)
	if v["ok"] != true || len(ev) != 3 {
		t.Errorf("audit: verify ok = %v, %d calibration events; want ok and 3", v["ok"], len(ev))
	}
}

// TestActivationSwitchesCouponModel checks that the coupon model view uses
// the group's latest activation, whose prediction it reproduces exactly.
func TestActivationSwitchesCouponModel(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	cs := e.storeFitCoupons(8, 0)
	all := e.fit(calibrationBody("jackson_fixed", nil))
	early := e.fit(calibrationBody("jackson_fixed", map[string]any{"welded_to": "2026-11-05"}))
	if len(early.CouponIDs) != 4 || all.Fit.Penetration.KMM == early.Fit.Penetration.KMM {
		t.Fatalf("fixture fits: %d coupons before 2026-11-05, K %v vs %v; want 4 and different K", len(early.CouponIDs), early.Fit.Penetration.KMM, all.Fit.Penetration.KMM)
	}
	view := func() map[string]any {
		t.Helper()
		return decode[map[string]any](t, "coupon model", e.do(http.MethodGet, "/v1/coupons/"+cs[6].id+"/model", "auditor", nil), http.StatusOK)
	}
	pen := func(v map[string]any) map[string]any { return v["penetration"].(map[string]any) }
	if v := view(); pen(v)["source"] != "none" || v["caution"] == "" {
		t.Errorf("before any activation: penetration %v, caution %q; want source none and a caution", pen(v), v["caution"])
	}
	t.Run("ErrNoReason", func(t *testing.T) {
		r := e.do(http.MethodPost, "/v1/calibrations/"+all.ID+"/activate", "engineer", map[string]any{"reason": ""})
		wantProblem(t, "activation with an empty reason", r, r.status, "reason")
		if r.status != http.StatusBadRequest && r.status != http.StatusUnprocessableEntity {
			t.Errorf("activation with an empty reason: status %d, want 400 or 422", r.status)
		}
	})
	for _, cal := range []calibrationReply{all, early, all} {
		act := decode[map[string]any](t, "activate", e.do(http.MethodPost, "/v1/calibrations/"+cal.ID+"/activate", "engineer",
			map[string]any{"reason": "use the fixture fit"}), http.StatusCreated)
		if act["calibration_id"] != cal.ID || act["activated_by"] != "test-engineer" {
			t.Errorf("activation = %v, want calibration %s by test-engineer", act, cal.ID)
		}
		c := cs[6]
		want, err := e.storedFit(cal.ID).Penetration.Predict(c.currentA, c.voltageV, c.speedS, 0.95)
		if err != nil {
			t.Fatal(err)
		}
		p := pen(view())
		measured := (c.sections[0] + c.sections[1]) / 2
		if p["calibration_id"] != cal.ID || p["predicted_mm"] != answered(want.MedianMM) || p["measured_mean_mm"] != answered(measured) {
			t.Errorf("after activating %s: view %v, want predicted %v (median) and measured %v", cal.ID, p, answered(want.MedianMM), answered(measured))
		}
		inside := measured >= want.PredLowMM && measured <= want.PredHighMM
		if p["residual_mm"] != answered(measured-want.MedianMM) || p["inside_prediction_interval"] != inside {
			t.Errorf("residual %v inside %v, want %v and %v", p["residual_mm"], p["inside_prediction_interval"], answered(measured-want.MedianMM), inside)
		}
	}
	active := e.do(http.MethodGet, "/v1/calibrations?active=true", "auditor", nil).items(t)
	if len(active) != 1 || active[0]["id"] != all.ID {
		t.Errorf("active calibrations = %v, want only %s", active, all.ID)
	}
	ev := e.do(http.MethodGet, "/v1/audit/events?entity=calibration_activation", "auditor", nil).items(t)
	if len(ev) != 3 || ev[0]["action"] != "activate" || ev[0]["reason"] != "use the fixture fit" {
		t.Errorf("activation events = %d (%v), want 3 with action activate and the reason", len(ev), ev)
	}
}

// TestFitRefused checks that fits the coupons cannot support are refused
// with 422 naming the reason, and that nothing is stored.
func TestFitRefused(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name        string
		coupons     int
		oneCurrentA float64
		body        map[string]any
		field, want string
	}{
		{"ErrTooFewCoupons", 1, 0, calibrationBody("jackson_fixed", nil), "coupons", "at least 2 coupons, have 1"},
		{"ErrNoCoupons", 0, 0, calibrationBody("jackson_free", nil), "coupons", "have 0"},
		{"ErrAllAtOneCurrent", 6, 180, calibrationBody("jackson_free", nil), "coupons", "all coupons at one current (180 A)"},
		{"ErrLesnewichWithoutArcLength", 6, 0, calibrationBody("lesnewich", nil), "arc_length_mm", "required"},
		{"ErrArcLengthAboveCTWD", 6, 0, calibrationBody("lesnewich", map[string]any{"arc_length_mm": 20}), "arc_length_mm", "shorter than CTWD"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			e := newEnv(t)
			if tc.coupons > 0 {
				e.storeFitCoupons(tc.coupons, tc.oneCurrentA)
			}
			r := e.do(http.MethodPost, "/v1/calibrations", "engineer", tc.body)
			p := wantProblem(t, tc.name, r, http.StatusUnprocessableEntity, tc.field)
			found := false
			for _, is := range p.Errors {
				found = found || is.Field == tc.field && strings.Contains(is.Reason, tc.want)
			}
			if !found {
				t.Errorf("%s: errors %+v, want %q naming %q", tc.name, p.Errors, tc.field, tc.want)
			}
			if list := e.do(http.MethodGet, "/v1/calibrations", "auditor", nil).items(t); len(list) != 0 {
				t.Errorf("%s: %d calibrations stored after a refused fit, want 0", tc.name, len(list))
			}
		})
	}
}

// TestPredictionRoles checks that an auditor may read calibrations and run
// what-ifs, inverse solves and windows, but not fit or activate (403).
func TestPredictionRoles(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	cs := e.storeFitCoupons(3, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	k := map[string]any{"value": 0.025, "units": "metric"}
	for _, tc := range []struct {
		method, path string
		body         any
	}{
		{http.MethodGet, "/v1/calibrations", nil},
		{http.MethodGet, "/v1/calibrations/" + cal.ID, nil},
		{http.MethodGet, "/v1/coupons/" + cs[0].id + "/model", nil},
		{http.MethodPost, "/v1/predictions", map[string]any{"current_a": 180, "voltage_v": 21, "travel_speed_mm_s": 5}},
		{http.MethodPost, "/v1/inverse/hold-penetration", map[string]any{"current_a": 180, "voltage_v": 21, "travel_speed_mm_s": 5, "new_travel_speed_mm_s": 6}},
		{http.MethodPost, "/v1/inverse/penetration", map[string]any{"solve_for": "current", "penetration_mm": 2, "voltage_v": 21, "travel_speed_mm_s": 5, "jackson_k": k}},
		{http.MethodPost, "/v1/inverse/current-for-deposition", map[string]any{"melting_rate_kg_h": 3, "extension_mm": 12, "lesnewich": map[string]any{"alpha_kg_h_a": 0.01, "beta_kg_h_a2_mm": 5e-6}}},
		{http.MethodPost, "/v1/parameter-window", map[string]any{"current_a": map[string]any{"min": 150, "max": 220}, "voltage_v": map[string]any{"min": 19, "max": 23}, "travel_speed_mm_s": map[string]any{"min": 4, "max": 6}}},
	} {
		t.Run("Auditor"+tc.method+tc.path, func(t *testing.T) {
			if r := e.do(tc.method, tc.path, "auditor", tc.body); r.status != http.StatusOK {
				t.Errorf("auditor %s %s = %d %s, want 200", tc.method, tc.path, r.status, r.body)
			}
		})
	}
	for _, role := range []string{"auditor", "technician"} {
		t.Run("ErrForbidden/"+role, func(t *testing.T) {
			r := e.do(http.MethodPost, "/v1/calibrations", role, calibrationBody("jackson_fixed", nil))
			wantProblem(t, role+" fits", r, http.StatusForbidden, "")
			r = e.do(http.MethodPost, "/v1/calibrations/"+cal.ID+"/activate", role, map[string]any{"reason": "try"})
			wantProblem(t, role+" activates", r, http.StatusForbidden, "")
		})
	}
	t.Run("ErrNotFound", func(t *testing.T) {
		for _, path := range []string{"/v1/calibrations/" + cs[0].id, "/v1/coupons/" + cal.ID + "/model"} {
			wantProblem(t, "GET "+path, e.do(http.MethodGet, path, "auditor", nil), http.StatusNotFound, "")
		}
		r := e.do(http.MethodPost, "/v1/calibrations/"+cs[0].id+"/activate", "engineer", map[string]any{"reason": "no such calibration"})
		wantProblem(t, "activate a coupon id", r, http.StatusNotFound, "")
	})
	if active := e.do(http.MethodGet, "/v1/calibrations?active=true", "auditor", nil).items(t); len(active) != 0 {
		t.Errorf("after refused activations: %d active calibrations, want 0", len(active))
	}
}
