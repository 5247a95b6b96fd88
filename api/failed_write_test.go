package api_test

import (
	"net/http"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/uuid"
)

// siteState is everything a site's API shows: every record with all its
// revisions and every audit event.
type siteState struct {
	Records map[string][]map[string]any
	Events  []map[string]any
}

// snapshot reads a site's whole state through the API.
func snapshot(t *testing.T, e *testEnv) siteState {
	t.Helper()
	s := siteState{Records: map[string][]map[string]any{}}
	for _, list := range []string{"/v1/procedures", "/v1/qualification-records", "/v1/coupons", "/v1/measurements"} {
		for _, it := range e.do(http.MethodGet, list+"?limit=500&include_voided=true", "auditor", nil).items(t) {
			p := list + "/" + it["id"].(string)
			s.Records[p] = e.do(http.MethodGet, p+"/revisions", "auditor", nil).items(t)
		}
	}
	s.Events = e.do(http.MethodGet, "/v1/audit/events?limit=500", "auditor", nil).items(t)
	return s
}

// TestFailedWritesLeaveNothing sends writes that fail at every stage (auth,
// size, shape, validation, inside the database transaction) and checks that
// no record, revision or audit event appeared and the audit chain verifies.
func TestFailedWritesLeaveNothing(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.procedure()
	coupon := couponBody(proc, e.pqr(), uniq("C"))
	cid := e.create("/v1/coupons", "technician", coupon)["id"].(string)
	pbody := procedureBody(uniq("WPS"))
	pid := e.create("/v1/procedures", "engineer", pbody)["id"].(string)
	voided := e.mustProcedure()
	e.do(http.MethodPost, "/v1/procedures/"+voided+"/void", "engineer", map[string]any{"base_revision": 1, "reason": "withdrawn"})
	before := snapshot(t, e)

	hot := clone(coupon)
	hot["coupon_mark"], hot["current_a"] = uniq("C"), 1500.0
	renamed := withRevision(pbody, 1, "renumber")
	renamed["code"] = uniq("WPS")
	onVoided := couponBody(voided, "", uniq("C"))
	for _, c := range []struct {
		name, method, path, role string
		body                     any
		status                   int
	}{
		{"Auditor", http.MethodPost, "/v1/coupons", "auditor", couponBody(proc, "", uniq("C")), 403},
		{"TooLarge", http.MethodPost, "/v1/coupons", "technician", `{"remark": "` + strings.Repeat("x", 2<<20) + `"}`, 413},
		{"Malformed", http.MethodPost, "/v1/coupons", "technician", `{"coupon_mark": "C-9",`, 400},
		{"UnknownField", http.MethodPost, "/v1/coupons", "technician", map[string]any{"coupon_mark": "C-9", "x": 1}, 400},
		{"OutOfRange", http.MethodPost, "/v1/coupons", "technician", hot, 422},
		{"DuplicateMark", http.MethodPost, "/v1/coupons", "technician", coupon, 409},
		{"VoidedProcedure", http.MethodPost, "/v1/coupons", "technician", onVoided, 422},
		{"UnknownCoupon", http.MethodPost, "/v1/coupons/" + uuid.NewString() + "/measurements", "technician", measurementBody("A"), 404},
		{"StaleBase", http.MethodPut, "/v1/coupons/" + cid, "technician", withRevision(coupon, 2, "fix"), 409},
		{"BlankReason", http.MethodPut, "/v1/coupons/" + cid, "technician", withRevision(coupon, 1, "   "), 422},
		{"CodeChange", http.MethodPut, "/v1/procedures/" + pid, "engineer", renamed, 422},
		{"VoidStale", http.MethodPost, "/v1/coupons/" + cid + "/void", "technician", map[string]any{"base_revision": 3, "reason": "x"}, 409},
		{"VoidUnknown", http.MethodPost, "/v1/coupons/" + uuid.NewString() + "/void", "technician", map[string]any{"base_revision": 1, "reason": "x"}, 404},
	} {
		t.Run(c.name, func(t *testing.T) {
			wantProblem(t, c.name, e.do(c.method, c.path, c.role, c.body), c.status, "")
		})
	}

	if d := cmp.Diff(before, snapshot(t, e)); d != "" {
		t.Errorf("failed writes changed the site (-before +after):\n%s", d)
	}
	v := e.do(http.MethodGet, "/v1/audit/verify", "auditor", nil).object(t)
	if v["ok"] != true || v["leaves_checked"] != float64(len(before.Events)) {
		t.Errorf("GET /v1/audit/verify = %v, want ok over %d events", v, len(before.Events))
	}
}
