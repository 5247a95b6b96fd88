package api_test

import (
	"net/http"
	"strings"
	"testing"
)

// TestRangesFollowTheirEvidence: correcting the qualification record that
// supports a procedure's ranges marks them stale (the ranges read names the
// record) and every range flag says so until the engineer derives them
// again; voiding it does too.
func TestRangesFollowTheirEvidence(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	pqrBody := qualificationRecordBody(uniq("PQR-EV"))
	pqr := e.create("/v1/qualification-records", "engineer", pqrBody)["id"].(string)
	proc := e.create("/v1/procedures", "engineer", procedureBody(uniq("WPS-EV"), pqr))["id"].(string)
	e.create("/v1/procedures/"+proc+"/ranges", "engineer", map[string]any{"rule_set_id": "structural-style-gmaw"})
	c := e.mustCoupon(proc) // 180 A: below the derived 252–308 A
	ranges := func() map[string]any {
		return e.do(http.MethodGet, "/v1/procedures/"+proc+"/ranges", "auditor", nil).object(t)
	}
	rangeFlag := func() string {
		for _, f := range e.flagsOf(c, "range") {
			if f["variable"] == "current_a" {
				return f["detail"].(string)
			}
		}
		t.Fatalf("no current_a range flag on the coupon")
		return ""
	}
	if s, ok := ranges()["stale"]; ok || strings.Contains(rangeFlag(), "stale") {
		t.Fatalf("fresh ranges marked stale: %v", s)
	}
	fixed := withRevision(pqrBody, 1, "current re-read from the power source log")
	fixed["current_a"] = 260.0
	if r := e.do(http.MethodPut, "/v1/qualification-records/"+pqr, "engineer", fixed); r.status != http.StatusOK {
		t.Fatalf("correct PQR: %d %s", r.status, r.body)
	}
	stale, _ := ranges()["stale"].(string)
	if !strings.Contains(stale, pqrBody["record_number"].(string)+" was corrected") {
		t.Errorf("ranges stale = %q, want it to name the corrected record", stale)
	}
	if d := rangeFlag(); !strings.Contains(d, "the ranges are stale") {
		t.Errorf("range flag %q does not say the ranges are stale", d)
	}
	e.create("/v1/procedures/"+proc+"/ranges", "engineer", map[string]any{"rule_set_id": "structural-style-gmaw"})
	if s, ok := ranges()["stale"]; ok || strings.Contains(rangeFlag(), "stale") {
		t.Errorf("after deriving again: stale %v, flag %q; want neither", s, rangeFlag())
	}
	e.ok("/v1/qualification-records/"+pqr+"/void", "engineer", map[string]any{"base_revision": 2, "reason": "record withdrawn"})
	if stale, _ := ranges()["stale"].(string); !strings.Contains(stale, "was voided") {
		t.Errorf("after the void: stale = %q, want it to say voided", stale)
	}
}
