package api_test

import (
	"encoding/base64"
	"io"
	"net/http"
	"strings"
	"testing"

	"github.com/google/uuid"
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

// TestConventionStatus: 400 for the request's shape, 422 for refused values,
// and 400 when one answer holds both.
func TestConventionStatus(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.procedure()
	couponPath := "/v1/coupons/" + e.coupon()
	stored := e.do(http.MethodGet, couponPath, "auditor", nil).object(t)
	correction := func(edit func(b map[string]any)) map[string]any {
		b := couponBody(proc, "", stored["coupon_mark"].(string))
		b["base_revision"], b["reason"] = 1.0, "typo"
		edit(b)
		return b
	}
	withBad := func(edit func(b map[string]any)) map[string]any {
		b := couponBody(proc, "", uniq("C"))
		edit(b)
		return b
	}
	les := map[string]any{"alpha_kg_h_a": 0.0095, "beta_kg_h_a2_mm": 4.5e-6}
	for _, c := range []struct {
		name, method, path, role string
		body                     any
		status                   int
		field                    string
	}{
		{"MalformedJSON", http.MethodPost, "/v1/coupons", "technician", `{"coupon_mark": `, 400, "body"},
		{"UnknownField", http.MethodPost, "/v1/coupons", "technician", withBad(func(b map[string]any) { b["welder"] = "W-07" }), 400, "welder"},
		{"WrongType", http.MethodPost, "/v1/coupons", "technician", withBad(func(b map[string]any) { b["current_a"] = "180" }), 400, "current_a"},
		{"MissingField", http.MethodPost, "/v1/coupons", "technician", withBad(func(b map[string]any) { delete(b, "welder_id") }), 400, "welder_id"},
		{"MissingQuantity", http.MethodPost, "/v1/coupons", "technician", withBad(func(b map[string]any) { delete(b, "thickness_mm") }), 400, "thickness_mm"},
		{"UnknownQuery", http.MethodGet, "/v1/coupons?welder=TR-W09", "auditor", nil, 400, "welder"},
		{"UnknownQueryMark", http.MethodGet, "/v1/procedures?coupon_mark=X", "auditor", nil, 400, "coupon_mark"},
		{"UnknownQueryOnRead", http.MethodGet, couponPath + "?version=1", "auditor", nil, 400, "version"},
		{"CorrectionNoReason", http.MethodPut, couponPath, "technician", correction(func(b map[string]any) { delete(b, "reason") }), 400, "reason"},
		{"CorrectionNoBase", http.MethodPut, couponPath, "technician", correction(func(b map[string]any) { delete(b, "base_revision") }), 400, "base_revision"},
		{"InverseNoK", http.MethodPost, "/v1/inverse/penetration", "auditor",
			map[string]any{"solve_for": "current", "penetration_mm": 2, "voltage_v": 23, "travel_speed_mm_s": 4}, 400, "jackson_k"},
		{"InverseNoEfficiency", http.MethodPost, "/v1/inverse/current-for-deposition", "auditor",
			map[string]any{"deposition_rate_kg_h": 3, "extension_mm": 12, "lesnewich": les}, 400, "deposition_efficiency"},
		{"InverseNoCoefficients", http.MethodPost, "/v1/inverse/current-for-deposition", "auditor",
			map[string]any{"melting_rate_kg_h": 3, "extension_mm": 12}, 400, "lesnewich"},
		{"ActivationNoReason", http.MethodPost, "/v1/calibrations/" + uuid.NewString() + "/activate", "engineer", map[string]any{}, 400, "reason"},
		{"NarrowNoBase", http.MethodPost, "/v1/procedures/" + proc + "/ranges/narrow", "engineer",
			map[string]any{"reason": "tighter", "variables": []any{map[string]any{"variable": "current_a", "max": 300}}}, 400, "base_version"},

		{"OutOfBounds", http.MethodPost, "/v1/coupons", "technician", withBad(func(b map[string]any) { b["current_a"] = 5000.0 }), 422, "current_a"},
		{"NotAllowed", http.MethodPost, "/v1/coupons", "technician", withBad(func(b map[string]any) { b["polarity"] = "DC+" }), 422, "polarity"},
		{"CorrectionBlankReason", http.MethodPut, couponPath, "technician", correction(func(b map[string]any) { b["reason"] = " " }), 422, "reason"},
		{"CorrectionBaseZero", http.MethodPut, couponPath, "technician", correction(func(b map[string]any) { b["base_revision"] = 0 }), 422, "base_revision"},
		{"UnknownLink", http.MethodPost, "/v1/coupons", "technician", withBad(func(b map[string]any) { b["procedure_id"] = uuid.NewString() }), 422, "procedure_id"},

		{"BothKinds", http.MethodPost, "/v1/coupons", "technician",
			withBad(func(b map[string]any) { delete(b, "welder_id"); b["current_a"] = 5000.0 }), 400, "welder_id"},
	} {
		t.Run(c.name, func(t *testing.T) {
			wantProblem(t, c.name, e.do(c.method, c.path, c.role, c.body), c.status, c.field)
		})
	}
	t.Run("ContentType", func(t *testing.T) {
		for _, ct := range []string{"", "text/plain"} {
			req, _ := http.NewRequest(http.MethodPost, e.url+"/v1/coupons", strings.NewReader(string(normalizeJSON(couponBody(proc, "", uniq("C"))))))
			req.Header.Set("Authorization", "Bearer "+e.tokens["technician"])
			if ct != "" {
				req.Header.Set("Content-Type", ct)
			}
			res, err := http.DefaultClient.Do(req)
			if err != nil {
				t.Fatal(err)
			}
			b, _ := io.ReadAll(res.Body)
			res.Body.Close()
			wantProblem(t, "Content-Type "+ct, reply{status: res.StatusCode, header: res.Header, body: b}, 400, "Content-Type")
		}
	})
	// Every operation refuses a query parameter it does not take, naming it.
	for _, route := range e.srv.Routes() {
		method, path, _ := strings.Cut(route, " ")
		if method != http.MethodGet || !strings.HasPrefix(path, "/v1/") {
			continue
		}
		t.Run("UnknownQuery"+path, func(t *testing.T) {
			r := e.do(method, withIDs(path)+"?colour=blue", "auditor", nil)
			wantProblem(t, route+"?colour=blue", r, http.StatusBadRequest, "colour")
		})
	}
	t.Run("CouponMarkFilter", func(t *testing.T) {
		got := e.do(http.MethodGet, withQuery("/v1/coupons", "coupon_mark", stored["coupon_mark"].(string)), "auditor", nil).items(t)
		if len(got) != 1 || got[0]["id"] != stored["id"] {
			t.Errorf("coupons with mark %v = %v, want only %v", stored["coupon_mark"], got, stored["id"])
		}
	})
}

// TestConventionCreated: every operation that creates something answers 201.
func TestConventionCreated(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	coupon := e.mustCoupon(proc)
	e.storeFitCoupons(4, 0)
	for _, c := range []struct {
		path, role string
		body       any
	}{
		{"/v1/procedures", "engineer", procedureBody(uniq("WPS"))},
		{"/v1/qualification-records", "engineer", qualificationRecordBody(uniq("PQR"))},
		{"/v1/coupons", "technician", couponBody(proc, "", uniq("C"))},
		{"/v1/coupons/" + coupon + "/measurements", "technician", measurementBody("A")},
		{"/v1/rule-sets", "engineer", map[string]any{"id": "conv-" + uniq("rs"), "name": "convention test", "process": "GMAW",
			"rules": []any{map[string]any{"variable": "current_a", "kind": "percent_band", "below_pct": 10, "above_pct": 10}}}},
		{"/v1/procedures/" + proc + "/ranges", "engineer", map[string]any{"rule_set_id": "structural-style-gmaw"}},
		{"/v1/procedures/" + proc + "/ranges/narrow", "engineer", map[string]any{"base_version": 2, "reason": "tighter",
			"variables": []any{map[string]any{"variable": "current_a", "max": 300}}}},
		{"/v1/production-records", "technician", map[string]any{"records": []any{productionBody(proc, "CR-1", 280)}}},
	} {
		e.create(c.path, c.role, c.body)
	}
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	r := e.do(http.MethodPost, "/v1/calibrations/"+cal.ID+"/activate", "engineer", map[string]any{"reason": "convention"})
	if r.status != http.StatusCreated || r.header.Get("Location") != "/v1/calibrations/"+cal.ID {
		t.Errorf("activate = %d, Location %q: want 201 and the calibration's path", r.status, r.header.Get("Location"))
	}
}
