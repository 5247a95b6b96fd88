package api_test

import (
	"net/http"
	"strings"
	"testing"

	"github.com/google/uuid"
)

// withIDs fills every {param} of an OpenAPI-style path with a fresh UUID.
func withIDs(path string) string {
	parts := strings.Split(path, "/")
	for i, p := range parts {
		if strings.HasPrefix(p, "{") {
			parts[i] = uuid.NewString()
		}
	}
	return strings.Join(parts, "/")
}

// TestTokenRequired calls every registered /v1 route without a usable
// token: 401 problem with a Bearer challenge. The other routes are public.
func TestTokenRequired(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, route := range e.srv.Routes() {
		method, path, _ := strings.Cut(route, " ")
		if path == "/" {
			continue // a public redirect to the lab pages, which TestPage checks without a token
		}
		if !strings.HasPrefix(path, "/v1/") {
			t.Run(route, func(t *testing.T) {
				if r := e.do(method, path, "", nil); r.status != http.StatusOK {
					t.Errorf("public %s without a token: status = %d, want 200", route, r.status)
				}
			})
			continue
		}
		for _, c := range []struct{ name, auth string }{
			{"NoHeader", ""},
			{"EmptyBearer", "Bearer "},
			{"NoScheme", e.tokens["engineer"]},
			{"BasicScheme", "Basic dGVzdDp0ZXN0"},
			{"UnknownToken", "Bearer unknown-token-0123456789abcdef"},
			{"TokenWithSuffix", "Bearer " + e.tokens["engineer"] + "x"},
		} {
			t.Run(route+"/"+c.name, func(t *testing.T) {
				r := e.doAuth(method, withIDs(path), c.auth, nil)
				wantProblem(t, route+" with "+c.name, r, http.StatusUnauthorized, "")
				if h := r.header.Get("WWW-Authenticate"); !strings.HasPrefix(h, "Bearer") {
					t.Errorf("WWW-Authenticate = %q, want a Bearer challenge", h)
				}
			})
		}
	}
}

// TestRoles sends every foundation write with each role that may not make
// it: auditors write nothing, technicians no procedures or qualification
// records. 403 problem, even with a valid body.
func TestRoles(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc, pqr, coupon := e.procedure(), e.pqr(), e.coupon()
	meas := e.mustMeasurement(coupon)
	void := map[string]any{"base_revision": 1, "reason": "test"}
	for _, c := range []struct {
		method, path string
		body         map[string]any
		refused      []string
	}{
		{http.MethodPost, "/v1/procedures", procedureBody(uniq("WPS")), []string{"auditor", "technician"}},
		{http.MethodPut, "/v1/procedures/" + proc, withRevision(procedureBody("x"), 1, "r"), []string{"auditor", "technician"}},
		{http.MethodPost, "/v1/procedures/" + proc + "/void", void, []string{"auditor", "technician"}},
		{http.MethodPost, "/v1/qualification-records", qualificationRecordBody(uniq("PQR")), []string{"auditor", "technician"}},
		{http.MethodPut, "/v1/qualification-records/" + pqr, withRevision(qualificationRecordBody("x"), 1, "r"), []string{"auditor", "technician"}},
		{http.MethodPost, "/v1/qualification-records/" + pqr + "/void", void, []string{"auditor", "technician"}},
		{http.MethodPost, "/v1/coupons", couponBody(proc, "", uniq("C")), []string{"auditor"}},
		{http.MethodPut, "/v1/coupons/" + coupon, withRevision(couponBody(proc, "", "x"), 1, "r"), []string{"auditor"}},
		{http.MethodPost, "/v1/coupons/" + coupon + "/void", void, []string{"auditor"}},
		{http.MethodPost, "/v1/coupons/" + coupon + "/measurements", measurementBody("A"), []string{"auditor"}},
		{http.MethodPut, "/v1/measurements/" + meas, withRevision(measurementBody("A"), 1, "r"), []string{"auditor"}},
		{http.MethodPost, "/v1/measurements/" + meas + "/void", void, []string{"auditor"}},
	} {
		for _, role := range c.refused {
			t.Run(c.method+" "+c.path+"/"+role, func(t *testing.T) {
				wantProblem(t, role+" "+c.method+" "+c.path, e.do(c.method, c.path, role, c.body), http.StatusForbidden, "")
			})
		}
	}
	// Nothing was written by the refused requests: every record is still at revision 1.
	for _, path := range []string{"/v1/procedures/" + proc, "/v1/qualification-records/" + pqr, "/v1/coupons/" + coupon, "/v1/measurements/" + meas} {
		if rev := e.do(http.MethodGet, path, "auditor", nil).object(t)["revision"]; rev != 1.0 {
			t.Errorf("GET %s revision = %v after refused writes, want 1", path, rev)
		}
	}
	// Every role reads.
	for _, role := range []string{"auditor", "technician", "engineer"} {
		if r := e.do(http.MethodGet, "/v1/coupons/"+coupon, role, nil); r.status != http.StatusOK {
			t.Errorf("%s reading a coupon: status = %d, want 200", role, r.status)
		}
	}
}

// TestBearerSchemeCaseInsensitive: the auth scheme name is case-insensitive
// (RFC 9110, section 11.1), so "bearer" and "BEARER" work like "Bearer".
func TestBearerSchemeCaseInsensitive(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, scheme := range []string{"bearer", "BEARER", "Bearer"} {
		if r := e.doAuth(http.MethodGet, "/v1/coupons", scheme+" "+e.tokens["auditor"], nil); r.status != http.StatusOK {
			t.Errorf("GET /v1/coupons with scheme %q: status = %d, want 200", scheme, r.status)
		}
	}
}
