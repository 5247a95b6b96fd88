package api_test

import (
	"net/http"
	"strings"
	"testing"

	"github.com/google/uuid"
)

// TestBadPathID sends a malformed id to every registered route with an {id}: 400 naming id.
func TestBadPathID(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, route := range e.srv.Routes() {
		method, path, _ := strings.Cut(route, " ")
		if !strings.Contains(path, "{id}") {
			continue
		}
		for _, bad := range []string{"42", "WPS-101", "01a23493-441b-786a-a689-a9bf411b74dz"} {
			t.Run(route+"/"+bad, func(t *testing.T) {
				p := strings.Replace(path, "{id}", bad, 1)
				wantProblem(t, route+" id "+bad, e.do(method, p, "engineer", map[string]any{}), http.StatusBadRequest, "id")
			})
		}
	}
}

// TestBadQuery sends malformed and out-of-range query parameters to the lists
// and reads: 400 for a malformed value, 422 for one out of range, naming it.
func TestBadQuery(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	coupon := "/v1/coupons/" + e.coupon()
	for _, c := range []struct {
		path   string
		status int
		field  string
	}{
		{"/v1/coupons?procedure_id=WPS-101", 400, "procedure_id"},
		{"/v1/coupons?qualification_record_id=1", 400, "qualification_record_id"},
		{"/v1/measurements?coupon_id=C-1", 400, "coupon_id"},
		{"/v1/audit/events?entity_id=x", 400, "entity_id"},
		{"/v1/coupons?welded_from=2026-02-30", 400, "welded_from"},
		{"/v1/coupons?welded_to=11/03/2026", 400, "welded_to"},
		{"/v1/qualification-records?welded_from=yesterday", 400, "welded_from"},
		{"/v1/qualification-records?welded_to=2026-11-3", 400, "welded_to"},
		{"/v1/audit/events?from=2026-11-03T08:00", 400, "from"}, // no zone: neither a day nor RFC 3339
		{"/v1/audit/events?to=now", 400, "to"},
		{"/v1/coupons?include_voided=maybe", 400, "include_voided"},
		{"/v1/coupons?limit=ten", 400, "limit"},
		{"/v1/coupons?limit=0", 422, "limit"},
		{"/v1/coupons?limit=501", 422, "limit"},
		{"/v1/procedures?limit=-1", 422, "limit"},
		{"/v1/audit/events?limit=1.5", 400, "limit"},
		{coupon + "?revision=first", 400, "revision"},
		{coupon + "?revision=0", 422, "revision"},
	} {
		t.Run(c.path, func(t *testing.T) {
			wantProblem(t, "GET "+c.path, e.do(http.MethodGet, c.path, "auditor", nil), c.status, c.field)
		})
	}
	for _, c := range []struct{ path, field string }{
		{"/v1/coupons?acceptance=maybe", "acceptance"},
		{"/v1/measurements?acceptance=ok", "acceptance"},
		{"/v1/procedures?process=MIG", "process"},
		{"/v1/procedures?status=approved", "status"},
		{"/v1/qualification-records?outcome=passed", "outcome"},
		{"/v1/audit/events?entity=weld", "entity"},
	} {
		t.Run(c.path, func(t *testing.T) {
			r := e.do(http.MethodGet, c.path, "auditor", nil)
			if r.status != http.StatusBadRequest && r.status != http.StatusUnprocessableEntity {
				t.Errorf("GET %s: status = %d, want 400 or 422", c.path, r.status)
			}
			wantProblem(t, "GET "+c.path, r, r.status, c.field)
		})
	}
	for _, list := range []string{"/v1/procedures", "/v1/qualification-records", "/v1/coupons", "/v1/measurements", "/v1/audit/events"} {
		for _, cursor := range []string{"x", "-1", uuid.NewString() + "z"} {
			t.Run(list+"/cursor="+cursor, func(t *testing.T) {
				wantProblem(t, list+" cursor "+cursor, e.do(http.MethodGet, list+"?cursor="+cursor, "auditor", nil), http.StatusBadRequest, "cursor")
			})
		}
	}
}

// TestLinks refuses records that point at records that do not exist at the
// site or are voided: 422 naming the field.
func TestLinks(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	voidedProc := e.mustProcedure()
	e.do(http.MethodPost, "/v1/procedures/"+voidedProc+"/void", "engineer", map[string]any{"base_revision": 1, "reason": "withdrawn"})
	voidedCoupon := e.mustCoupon(e.procedure())
	e.do(http.MethodPost, "/v1/coupons/"+voidedCoupon+"/void", "technician", map[string]any{"base_revision": 1, "reason": "scrapped"})
	elsewhere := newEnv(t).procedure() // exists, at another site
	for _, c := range []struct {
		name, path, role string
		body             map[string]any
		field            string
	}{
		{"CouponUnknownProcedure", "/v1/coupons", "technician", couponBody(uuid.NewString(), "", uniq("C")), "procedure_id"},
		{"CouponOtherSiteProcedure", "/v1/coupons", "technician", couponBody(elsewhere, "", uniq("C")), "procedure_id"},
		{"CouponVoidedProcedure", "/v1/coupons", "technician", couponBody(voidedProc, "", uniq("C")), "procedure_id"},
		{"CouponUnknownRecord", "/v1/coupons", "technician", couponBody(e.procedure(), uuid.NewString(), uniq("C")), "qualification_record_id"},
		{"ProcedureUnknownRecord", "/v1/procedures", "engineer", procedureBody(uniq("WPS"), e.pqr(), uuid.NewString()), "supporting_record_ids"},
		// The voided coupon is named by the path; the refusal names the stored field.
		{"MeasurementVoidedCoupon", "/v1/coupons/" + voidedCoupon + "/measurements", "technician", measurementBody("A"), "coupon_id"},
	} {
		t.Run(c.name, func(t *testing.T) {
			wantProblem(t, c.name, e.do(http.MethodPost, c.path, c.role, c.body), http.StatusUnprocessableEntity, c.field)
		})
	}
	// A coupon named by the path that is not at the site is a missing resource.
	unknown := "/v1/coupons/" + uuid.NewString() + "/measurements"
	t.Run("MeasurementUnknownCoupon", func(t *testing.T) {
		wantProblem(t, "POST "+unknown, e.do(http.MethodPost, unknown, "technician", measurementBody("A")), http.StatusNotFound, "")
		wantProblem(t, "GET "+unknown, e.do(http.MethodGet, unknown, "auditor", nil), http.StatusNotFound, "")
	})
}
