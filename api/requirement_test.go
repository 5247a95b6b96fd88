package api_test

import (
	"net/http"
	"strings"
	"testing"
)

// flagsOf lists the flags of one subject, optionally of one kind.
func (e *testEnv) flagsOf(subjectID, kind string) []map[string]any {
	e.t.Helper()
	var out []map[string]any
	path := "/v1/flags?subject_kind=coupon"
	if kind != "" {
		path += "&kind=" + kind
	}
	for _, f := range e.do(http.MethodGet, path, "auditor", nil).items(e.t) {
		if f["subject_id"] == subjectID {
			out = append(out, f)
		}
	}
	return out
}

// ok posts body as role and fails the test unless the answer is 200.
func (e *testEnv) ok(path, role string, body any) map[string]any {
	e.t.Helper()
	return decode[map[string]any](e.t, "POST "+path, e.do(http.MethodPost, path, role, body), http.StatusOK)
}

// section posts one section with the given penetration (mm) and returns the reply.
func (e *testEnv) section(couponID, label string, penMM float64) reply {
	e.t.Helper()
	m := measurementBody(label)
	m["penetration_mm"] = penMM
	return e.do(http.MethodPost, "/v1/coupons/"+couponID+"/measurements", "technician", m)
}

// TestRequirementFlag: a section below the procedure's required minimum
// penetration gets a flag of kind requirement in plain words naming the
// section, both values and the procedure with its revision; one below the
// qualification record's own acceptance criterion names the record. The
// procedure's flag summary lists requirement flags first. The comparison is
// the acceptance rule itself (measured < required), no model involved.
func TestRequirementFlag(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	code := uniq("WPS-REQ")
	proc := e.create("/v1/procedures", "engineer", procedureBody(code))["id"].(string) // min 1.0 mm
	pqrBody := qualificationRecordBody(uniq("PQR-REQ"))
	pqrBody["min_penetration_mm"] = 0.8
	pqr := e.create("/v1/qualification-records", "engineer", pqrBody)
	if pqr["min_penetration_mm"] != 0.8 {
		t.Errorf("qualification record min_penetration_mm = %v, want 0.8", pqr["min_penetration_mm"])
	}
	c := e.create("/v1/coupons", "technician", couponBody(proc, pqr["id"].(string), uniq("C-REQ")))["id"].(string)
	for _, s := range []struct {
		label string
		pen   float64
	}{{"A", 1.2}, {"B", 0.6}} {
		if r := e.section(c, s.label, s.pen); r.status != http.StatusCreated {
			t.Fatalf("section %s: %d %s", s.label, r.status, r.body)
		}
	}
	fl := e.flagsOf(c, "requirement")
	if len(fl) != 1 {
		t.Fatalf("requirement flags = %v, want one", fl)
	}
	d := fl[0]["detail"].(string)
	for _, want := range []string{"section B penetration 0.6 mm is below the 1 mm that " + code + " rev 1 requires",
		"section B penetration 0.6 mm is below the 0.8 mm that " + pqrBody["record_number"].(string) + " rev 1 states"} {
		if !strings.Contains(d, want) {
			t.Errorf("detail %q lacks %q", d, want)
		}
	}
	if strings.Contains(d, "section A") || fl[0]["value"] != 0.6 || fl[0]["min"] != 1.0 {
		t.Errorf("flag %v: want value 0.6, min 1.0 and no word of section A", fl[0])
	}
	sum := e.do(http.MethodGet, "/v1/procedures/"+proc+"/flag-summary", "auditor", nil).object(t)
	by := sum["by_variable"].([]any)
	if len(by) == 0 || by[0].(map[string]any)["kind"] != "requirement" {
		t.Errorf("flag summary by_variable = %v, want the requirement first", by)
	}
}

// TestVoidedProcedureGetsNoNewFlags: after a procedure is voided, a section
// added to one of its coupons brings no flag back.
func TestVoidedProcedureGetsNoNewFlags(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.mustProcedure()
	c := e.mustCoupon(proc)
	if r := e.section(c, "A", 0.5); r.status != http.StatusCreated {
		t.Fatalf("section: %d %s", r.status, r.body)
	}
	if len(e.flagsOf(c, "requirement")) != 1 {
		t.Fatalf("no requirement flag before the void")
	}
	e.ok("/v1/procedures/"+proc+"/void", "engineer", map[string]any{"base_revision": 1, "reason": "superseded by a new procedure"})
	if r := e.section(c, "B", 0.4); r.status != http.StatusCreated {
		t.Fatalf("section after void: %d %s", r.status, r.body)
	}
	if fl := e.flagsOf(c, ""); len(fl) != 0 {
		t.Errorf("flags of a voided procedure's coupon = %v, want none", fl)
	}
}

// TestSectionsMakeSense: a second current section with the same label on a
// coupon is refused with 409 naming the existing section; a penetration
// deeper than the coupon's base metal is thick is refused with 422 naming
// both values; 0.075 typed into penetration_mm where the active model
// predicts about 2 mm is kept but flagged suspect_units with the reading
// 0.075 in = 1.905 mm (1 in = 25.4 mm, NIST SP 811).
func TestSectionsMakeSense(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	c := e.mustCoupon(e.mustProcedure())
	first := e.section(c, "A", 1.8)
	if first.status != http.StatusCreated {
		t.Fatalf("first A: %d %s", first.status, first.body)
	}
	firstID := first.object(t)["id"].(string)
	for _, label := range []string{"A", " a "} {
		r := e.section(c, label, 1.7)
		p := wantProblem(t, "second section "+label, r, http.StatusConflict, "section")
		if p.ExistingID != firstID {
			t.Errorf("second %q: existing_id = %q, want %s", label, p.ExistingID, firstID)
		}
	}
	r := e.section(c, "B", 15)
	p := wantProblem(t, "penetration deeper than the plate", r, http.StatusUnprocessableEntity, "penetration_mm")
	if !strings.Contains(p.Detail, "15 mm") || !strings.Contains(p.Detail, "6 mm") {
		t.Errorf("detail %q: want both 15 mm and the 6 mm thickness", p.Detail)
	}
	e.ok("/v1/measurements/"+firstID+"/void", "technician", map[string]any{"base_revision": 1, "reason": "section re-cut"})
	if r := e.section(c, "A", 1.75); r.status != http.StatusCreated {
		t.Errorf("A after the first A was voided: %d %s", r.status, r.body)
	}
}

// TestSuspectUnitsFlag needs the group's active calibration (predicting
// about 1.95 mm at couponBody's 180 A, 21 V, 5 mm/s).
func TestSuspectUnitsFlag(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(6, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	e.create("/v1/calibrations/"+cal.ID+"/activate", "engineer", map[string]any{"reason": "shop fit"})
	c := e.mustCoupon(e.mustProcedure())
	if r := e.section(c, "A", 0.075); r.status != http.StatusCreated {
		t.Fatalf("0.075 mm refused: %d %s", r.status, r.body)
	}
	fl := e.flagsOf(c, "suspect_units")
	if len(fl) != 1 {
		t.Fatalf("suspect_units flags = %v, want one", fl)
	}
	if d := fl[0]["detail"].(string); !strings.Contains(d, "0.075 in = 1.905 mm") || !strings.Contains(d, "model predicts") {
		t.Errorf("detail %q: want the conversion 0.075 in = 1.905 mm and the model's prediction", d)
	}
}
