package api_test

import (
	"encoding/base64"
	"net/http"
	"testing"
)

// The tests in this file hold the API to the conventions written in
// DEVELOPERS.md ("Conventions"), one test per convention.

// TestConventionCursor: every list hands out one opaque cursor format
// (unpadded base64url), follows it to the next page, and refuses a cursor
// handed out by another list (400 naming cursor) instead of skipping records.
func TestConventionCursor(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	e.mustProcedure()
	e.mustQualificationRecord()
	c1, c2 := e.mustCoupon(proc), e.mustCoupon(proc)
	e.mustMeasurement(c1)
	e.mustMeasurement(c2)
	// 320 A and 330 A are above the derived current range [252, 308] A: one flag each.
	e.create("/v1/production-records", "technician", map[string]any{"records": []any{
		productionBody(proc, "CUR-1", 320), productionBody(proc, "CUR-2", 330)}})
	e.storeFitCoupons(6, 0)
	e.fit(calibrationBody("jackson_fixed", nil))
	e.fit(calibrationBody("jackson_free", nil))

	lists := []string{"/v1/procedures", "/v1/qualification-records", "/v1/coupons", "/v1/measurements",
		"/v1/audit/events", "/v1/production-records", "/v1/flags", "/v1/calibrations"}
	cursors := map[string]string{}
	for _, list := range lists {
		first := e.do(http.MethodGet, withQuery(list, "limit", "1"), "auditor", nil)
		next, _ := first.object(t)["next_cursor"].(string)
		if first.status != http.StatusOK || next == "" {
			t.Errorf("GET %s?limit=1 = %d, next_cursor %q: want 200 and a cursor", list, first.status, next)
			continue
		}
		if _, err := base64.RawURLEncoding.DecodeString(next); err != nil {
			t.Errorf("%s next_cursor %q is not unpadded base64url: %v", list, next, err)
		}
		second := e.do(http.MethodGet, withQuery(list, "limit", "1", "cursor", next), "auditor", nil)
		a, b := first.items(t), second.items(t)
		if second.status != http.StatusOK || len(a) != 1 || len(b) != 1 || string(normalizeJSON(a[0])) == string(normalizeJSON(b[0])) {
			t.Errorf("%s second page = %d %s, want one item other than the first", list, second.status, second.body)
		}
		cursors[list] = next
	}
	for i, list := range lists {
		other := cursors[lists[(i+1)%len(lists)]]
		if other == "" {
			continue
		}
		wantProblem(t, list+" with another list's cursor", e.do(http.MethodGet, withQuery(list, "cursor", other), "auditor", nil),
			http.StatusBadRequest, "cursor")
	}
}
