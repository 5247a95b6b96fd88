package api_test

import (
	"encoding/base64"
	"fmt"
	"io"
	"net/http"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

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
			map[string]any{"reason": "tighter", "variables": []any{map[string]any{"variable": "current_a", "max": 300}}}, 400, "base_revision"},

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
		{"/v1/procedures/" + proc + "/ranges/narrow", "engineer", map[string]any{"base_revision": 2, "reason": "tighter",
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

// TestConventionTimeFilters: every date or time filter is half-open
// [from, to) and takes a day (YYYY-MM-DD, its midnight UTC) or an RFC 3339 time.
func TestConventionTimeFilters(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	coupons, pqrs := map[string]string{}, map[string]string{}
	for _, day := range []string{"2026-11-03", "2026-11-04", "2026-11-05"} {
		b := couponBody(proc, "", uniq("C-DAY"))
		b["welded_on"] = day
		coupons[e.create("/v1/coupons", "technician", b)["id"].(string)] = day
		q := qualificationRecordBody(uniq("PQR-DAY"))
		q["welded_on"] = day
		pqrs[e.create("/v1/qualification-records", "engineer", q)["id"].(string)] = day
	}
	// 320 A is above the derived current range: the record carries one flag at its recorded_at.
	e.create("/v1/production-records", "technician", map[string]any{"records": []any{productionBody(proc, "TF-1", 320)}})
	today := time.Now().UTC().Format(time.DateOnly)
	tomorrow := time.Now().UTC().AddDate(0, 0, 1).Format(time.DateOnly)
	for _, c := range []struct {
		name, list string
		kv         []string
		want       []string // days of the fixture records listed, or the count of other items as "n=…"
	}{
		{"WeldedDays", "/v1/coupons", []string{"welded_from", "2026-11-04", "welded_to", "2026-11-05"}, []string{"2026-11-04"}},
		{"WeldedToTime", "/v1/coupons", []string{"welded_from", "2026-11-03", "welded_to", "2026-11-04T12:00:00Z"}, []string{"2026-11-03", "2026-11-04"}},
		{"WeldedToMidnight", "/v1/coupons", []string{"welded_to", "2026-11-04T00:00:00Z"}, []string{"2026-11-03"}},
		{"WeldedFromOffset", "/v1/coupons", []string{"welded_from", "2026-11-05T00:30:00+02:00"}, []string{"2026-11-05"}},
		{"PQRDays", "/v1/qualification-records", []string{"welded_from", "2026-11-04", "welded_to", "2026-11-05"}, []string{"2026-11-04"}},
		{"AuditDays", "/v1/audit/events", []string{"from", today, "to", tomorrow, "entity", "coupon"}, []string{"n=3"}},
		{"AuditToToday", "/v1/audit/events", []string{"to", today}, []string{"n=0"}},
		{"RecordedToExclusive", "/v1/production-records", []string{"recorded_from", "2026-11-20", "recorded_to", "2026-11-20T09:30:00Z"}, []string{"n=0"}},
		{"RecordedFromInclusive", "/v1/production-records", []string{"recorded_from", "2026-11-20T09:30:00Z", "recorded_to", "2026-11-21"}, []string{"n=1"}},
		{"FlagsToExclusive", "/v1/flags", []string{"subject_kind", "production_record", "from", "2026-11-20", "to", "2026-11-20T09:30:00Z"}, []string{"n=0"}},
		{"FlagsFromInclusive", "/v1/flags", []string{"subject_kind", "production_record", "from", "2026-11-20T09:30:00Z", "to", "2026-11-21"}, []string{"n=1"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			r := e.do(http.MethodGet, withQuery(c.list, c.kv...), "auditor", nil)
			if r.status != http.StatusOK {
				t.Fatalf("GET %s = %d %s", withQuery(c.list, c.kv...), r.status, r.body)
			}
			items := r.items(t)
			var got []string
			if strings.HasPrefix(c.want[0], "n=") {
				got = []string{"n=" + strconv.Itoa(len(items))}
			} else {
				days := coupons
				if c.list == "/v1/qualification-records" {
					days = pqrs
				}
				for _, it := range items {
					if d, ok := days[it["id"].(string)]; ok {
						got = append(got, d)
					}
				}
				slices.Sort(got)
			}
			if !slices.Equal(got, c.want) {
				t.Errorf("GET %s: %v, want %v", withQuery(c.list, c.kv...), got, c.want)
			}
		})
	}
	for _, q := range []string{"/v1/coupons?welded_to=11/03/2026", "/v1/audit/events?from=yesterday", "/v1/flags?to=2026-13-01"} {
		r := e.do(http.MethodGet, q, "auditor", nil)
		field := strings.SplitN(strings.SplitN(q, "?", 2)[1], "=", 2)[0]
		wantProblem(t, q, r, http.StatusBadRequest, field)
	}
}

// TestConventionNames: one unit-suffix style and one model vocabulary. What
// an answer returns can be sent back under the same name, and no name in the
// document or in an answer spells a unit with "per" or a model otherwise.
func TestConventionNames(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(8, 0)
	fixed := e.fit(calibrationBody("jackson_fixed", nil))
	free := e.fit(calibrationBody("jackson_free", nil))
	les := e.fit(calibrationBody("lesnewich", map[string]any{"arc_length_mm": 3.5}))
	models := map[string]bool{"jackson_fixed": true, "jackson_free": true, "lesnewich": true}
	for _, cal := range []calibrationReply{fixed, free, les} {
		got := e.do(http.MethodGet, "/v1/calibrations/"+cal.ID, "auditor", nil).object(t)
		fit, _ := got["fit"].(map[string]any)
		var fitModel any
		for _, part := range fit {
			if m, ok := part.(map[string]any); ok {
				fitModel = m["model"]
			}
		}
		diag, _ := got["diagnostics"].(map[string]any)
		if got["model"] != fitModel || !models[fmt.Sprint(got["model"])] || diag["model"] != got["model"] {
			t.Errorf("calibration %s: model %v, fit model %v, diagnostics model %v; want one word of %v",
				cal.ID, got["model"], fitModel, diag["model"], models)
		}
		if n := len(e.do(http.MethodGet, withQuery("/v1/calibrations", "model", fmt.Sprint(got["model"])), "auditor", nil).items(t)); n != 1 {
			t.Errorf("calibrations ?model=%v: %d, want 1", got["model"], n)
		}
	}

	// The Lesnewich fit's coefficients, pasted as they come into a prediction,
	// in either unit set, give one melting rate.
	lesRead := e.do(http.MethodGet, "/v1/calibrations/"+les.ID, "auditor", nil).object(t)
	melting := lesRead["fit"].(map[string]any)["melting"].(map[string]any)
	setting := map[string]any{"current_a": 180.0, "voltage_v": 21.0, "travel_speed_mm_s": 5.0, "ctwd_mm": 15.0, "arc_length_mm": 3.5}
	rates := map[string]float64{}
	for name, keys := range map[string][]string{"metric": {"alpha_kg_h_a", "beta_kg_h_a2_mm"}, "inch": {"alpha_lb_h_a", "beta_lb_h_a2_in"}} {
		b := clone(setting)
		b["lesnewich"] = map[string]any{keys[0]: melting[keys[0]], keys[1]: melting[keys[1]]}
		p := e.predictAs(b)
		if p.Lesnewich == nil {
			t.Fatalf("prediction with the fit's %s coefficients has no Lesnewich answer", name)
		}
		rates[name] = p.Lesnewich.MeltingRateKgH
	}
	if !relClose(rates["inch"], rates["metric"], 1e-9) {
		t.Errorf("melting rate from the fit's metric coefficients %v kg/h, from its inch ones %v kg/h; want equal", rates["metric"], rates["inch"])
	}
	// A stored sample's fields and a prediction's echoed inputs are request fields.
	sample := e.do(http.MethodGet, "/v1/calibrations/"+fixed.ID, "auditor", nil).object(t)["samples"].(map[string]any)["penetration"].([]any)[0].(map[string]any)
	b := map[string]any{}
	for _, k := range []string{"current_a", "voltage_v", "travel_speed_mm_s"} {
		b[k] = sample[k]
	}
	r := e.do(http.MethodPost, "/v1/predictions", "auditor", b)
	if r.status != http.StatusOK {
		t.Errorf("prediction from a stored sample's fields %v = %d %s", b, r.status, r.body)
	}
	inputs := r.object(t)["inputs"]
	if back := e.do(http.MethodPost, "/v1/predictions", "auditor", inputs); back.status != http.StatusOK {
		t.Errorf("prediction inputs %v sent back = %d %s", inputs, back.status, back.body)
	}
	// A request's K is the published-exponent law: jackson_fixed.
	withK := clone(setting)
	withK["jackson_k"] = map[string]any{"value": 0.025, "units": "metric"}
	if p := e.predictAs(withK); p.Penetration.Model != "jackson_fixed" || p.Penetration.Source != "request" {
		t.Errorf("prediction with a request K: model %q source %q, want jackson_fixed from the request", p.Penetration.Model, p.Penetration.Source)
	}

	// No name in the document, nor in these answers, uses another style.
	var names []string
	var walk func(v any)
	walk = func(v any) {
		switch x := v.(type) {
		case map[string]any:
			for k, c := range x {
				names = append(names, k)
				walk(c)
			}
		case []any:
			for _, c := range x {
				walk(c)
			}
		}
	}
	walk(lesRead)
	walk(e.do(http.MethodGet, "/v1/calibrations/"+free.ID, "auditor", nil).object(t))
	spec := loadSpec(t)
	for name, s := range spec.Components.Schemas {
		for prop := range s.Value.Properties {
			names = append(names, name+"."+prop)
		}
	}
	for _, n := range names {
		if strings.Contains(n, "_per_") || strings.Contains(n, "_exponents") && !strings.HasSuffix(n, "exponents") {
			t.Errorf("name %s spells a unit or model in another style (want e.g. alpha_kg_h_a, travel_speed_mm_s, jackson_fixed)", n)
		}
	}
}
