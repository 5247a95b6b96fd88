package api_test

import (
	"encoding/base64"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"regexp"
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

// TestConventionErrorWords: a refusal names the field as sent, the value as
// sent with its unit, and what is allowed in that unit; a duplicate names
// the value and the existing record's id; no answer carries package
// prefixes, constraint names or SQLSTATEs.
func TestConventionErrorWords(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.procedure()
	coupon := func(edit func(b map[string]any)) map[string]any {
		b := couponBody(proc, "", uniq("C-W"))
		edit(b)
		return b
	}
	var bodies []string
	// Bounds from the domain primer: wire 0.6–4.0 mm, current 10–1000 A,
	// preheat −20–350 °C, thickness 0.5–300 mm; 1 in = 25.4 mm exactly and
	// °F = °C × 9/5 + 32 (NIST SP 811): 4 mm = 0.15748 in, 350 °C = 662 °F,
	// 0.5 mm = 0.019685 in.
	for _, c := range []struct {
		name  string
		body  map[string]any
		field string
		words []string
	}{
		{"WireInInches", coupon(func(b map[string]any) { delete(b, "wire_diameter_mm"); b["wire_diameter_in"] = 0.9 }),
			"wire_diameter_in", []string{"0.9 in", "above the plausible maximum 0.1575 in", "(4 mm)"}},
		{"CurrentAmps", coupon(func(b map[string]any) { b["current_a"] = 5000.0 }),
			"current_a", []string{"5000 A", "above the plausible maximum 1000 A"}},
		{"PreheatFahrenheit", coupon(func(b map[string]any) { delete(b, "preheat_c"); b["preheat_f"] = 1000.0 }),
			"preheat_f", []string{"1000 °F", "above the plausible maximum 662 °F", "(350 °C)"}},
		{"ThicknessInches", coupon(func(b map[string]any) { delete(b, "thickness_mm"); b["thickness_in"] = 0.001 }),
			"thickness_in", []string{"0.001 in", "below the plausible minimum 0.01969 in", "(0.5 mm)"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			r := e.do(http.MethodPost, "/v1/coupons", "technician", c.body)
			bodies = append(bodies, string(r.body))
			p := wantProblem(t, c.name, r, http.StatusUnprocessableEntity, c.field)
			for _, is := range p.Errors {
				for _, w := range c.words {
					if is.Field == c.field && !strings.Contains(is.Reason, w) {
						t.Errorf("%s reason %q does not say %q", c.field, is.Reason, w)
					}
				}
			}
		})
	}
	// Duplicates name the value and the record that holds it.
	mark := uniq("C-DUP")
	first := e.create("/v1/coupons", "technician", couponBody(proc, "", mark))["id"].(string)
	code := uniq("WPS-DUP")
	firstProc := e.create("/v1/procedures", "engineer", procedureBody(code))["id"].(string)
	number := uniq("PQR-DUP")
	firstPQR := e.create("/v1/qualification-records", "engineer", qualificationRecordBody(number))["id"].(string)
	for _, c := range []struct {
		path, role, field, value, id string
		body                         map[string]any
	}{
		{"/v1/coupons", "technician", "coupon_mark", mark, first, couponBody(proc, "", mark)},
		{"/v1/procedures", "engineer", "code", code, firstProc, procedureBody(code)},
		{"/v1/qualification-records", "engineer", "record_number", number, firstPQR, qualificationRecordBody(number)},
	} {
		r := e.do(http.MethodPost, c.path, c.role, c.body)
		bodies = append(bodies, string(r.body))
		p := wantProblem(t, "duplicate "+c.field, r, http.StatusConflict, c.field)
		var got struct {
			ExistingID string `json:"existing_id"`
		}
		_ = json.Unmarshal(r.body, &got)
		if got.ExistingID != c.id || len(p.Errors) != 1 || !strings.Contains(p.Errors[0].Reason, c.value) || !strings.Contains(p.Errors[0].Reason, c.id) {
			t.Errorf("duplicate %s %q: existing_id %q, errors %+v; want %s named with its value", c.field, c.value, got.ExistingID, p.Errors, c.id)
		}
	}
	// Other refusals that pass through the store.
	for _, r := range []reply{
		e.do(http.MethodGet, "/v1/coupons/"+uuid.NewString(), "auditor", nil),
		e.do(http.MethodPut, "/v1/coupons/"+first, "technician", withRevision(couponBody(proc, "", mark), 7, "stale")),
		e.do(http.MethodGet, "/v1/coupons?cursor=abc", "auditor", nil),
		e.do(http.MethodPost, "/v1/calibrations/"+uuid.NewString()+"/activate", "engineer", map[string]any{"reason": "none"}),
	} {
		if r.status < 400 {
			t.Errorf("want a refusal, got %d %s", r.status, r.body)
		}
		bodies = append(bodies, string(r.body))
	}
	leak := regexp.MustCompile(`\b(?:db|api|predict|pgx|pgconn): |_key\b|_check\b|SQLSTATE|\b23505\b|\bcreate coupon\b`)
	for _, b := range bodies {
		if m := leak.FindString(b); m != "" {
			t.Errorf("answer speaks the server's words (%q): %s", m, b)
		}
	}
}

// ownedFields are the server-owned fields a read answers and a correction
// may send back unchanged.
var ownedFields = map[string]bool{"site": true, "id": true, "revision": true, "created_at": true, "created_by": true,
	"voided": true, "coupon_id": true, "sign_off": true, "process": true, "inherited": true}

// kindOwned are owned fields only some kinds have: a section's coupon, the
// sign-off of procedures and PQRs, a coupon's process and inherited (taken
// from its procedure).
var kindOwned = map[string]bool{"coupon_id": true, "sign_off": true, "process": true, "inherited": true}

// TestConventionRoundTrip: GET a record, change one field, PUT the body back
// with base_revision and reason: accepted. A server-owned field that differs
// from the base revision is refused (422, named); on a new record it is refused too.
func TestConventionRoundTrip(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	coupon := e.mustCoupon(e.procedure())
	for _, c := range []struct {
		name, path, role, field string
		value                   any
	}{
		{"Procedure", "/v1/procedures/" + e.mustProcedure(), "engineer", "title", "Fillet welds, corrected title"},
		{"QualificationRecord", "/v1/qualification-records/" + e.mustQualificationRecord(), "engineer", "remarks", "re-read the chart"},
		{"Coupon", "/v1/coupons/" + coupon, "technician", "current_a", 185.0},
		{"Measurement", "/v1/measurements/" + e.mustMeasurement(coupon), "technician", "penetration_mm", 1.9},
	} {
		t.Run(c.name, func(t *testing.T) {
			read := e.do(http.MethodGet, c.path, "auditor", nil).object(t)
			for f := range ownedFields {
				if _, ok := read[f]; !ok && !kindOwned[f] {
					t.Fatalf("GET %s has no %s", c.path, f)
				}
			}
			body := clone(read)
			body[c.field], body["base_revision"], body["reason"] = c.value, read["revision"], "round trip"
			// Each owned field changed alone is refused and named.
			for f, v := range map[string]any{"site": "elsewhere", "id": uuid.NewString(), "revision": 9.0,
				"created_at": "2020-01-01T00:00:00Z", "created_by": "someone-else", "voided": true, "coupon_id": uuid.NewString(),
				"sign_off": map[string]any{"id": uuid.NewString()}, "process": "SAW", "inherited": []any{"polarity"}} {
				if _, ok := read[f]; !ok || (f == "process" || f == "inherited") && c.name != "Coupon" { // a procedure's process is its own
					continue
				}
				bad := clone(body)
				bad[f] = v
				wantProblem(t, "PUT with "+f+" changed", e.do(http.MethodPut, c.path, c.role, bad), http.StatusUnprocessableEntity, f)
			}
			r := e.do(http.MethodPut, c.path, c.role, body)
			if r.status != http.StatusOK {
				t.Fatalf("PUT %s with the read body, %s changed = %d %s, want 200", c.path, c.field, r.status, r.body)
			}
			got := r.object(t)
			if got["revision"] != 2.0 || got[c.field] != c.value || got["id"] != read["id"] || got["created_at"] == read["created_at"] {
				t.Errorf("PUT answered id %v revision %v created_at %v, %s %v; want revision 2 of %v, written now, with %v",
					got["id"], got["revision"], got["created_at"], c.field, got[c.field], read["id"], c.value)
			}
			// A new record may not carry them.
			if c.name == "Coupon" {
				fresh := couponBody(e.procedure(), "", uniq("C-RT"))
				fresh["id"] = uuid.NewString()
				wantProblem(t, "POST with id", e.do(http.MethodPost, "/v1/coupons", "technician", fresh), http.StatusUnprocessableEntity, "id")
			}
		})
	}
}

// TestConventionRevision: every numbered state is a revision: records, rule
// sets and qualified ranges answer `revision`, are read at one with
// ?revision=N and changed from one with base_revision.
func TestConventionRevision(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	coupon := e.mustCoupon(proc)
	r := e.do(http.MethodPost, "/v1/procedures/"+proc+"/ranges", "engineer", map[string]any{"rule_set_id": "structural-style-gmaw", "rule_set_revision": 1})
	if r.status != http.StatusCreated || r.header.Get("Location") != "/v1/procedures/"+proc+"/ranges?revision=2" || r.object(t)["revision"] != 2.0 {
		t.Fatalf("derive again = %d, Location %q, %s; want revision 2 located by ?revision=2", r.status, r.header.Get("Location"), r.body)
	}
	narrowed := e.create("/v1/procedures/"+proc+"/ranges/narrow", "engineer", map[string]any{"base_revision": 2, "reason": "shop limit",
		"variables": []any{map[string]any{"variable": "current_a", "max": 300}}})
	if narrowed["revision"] != 3.0 || narrowed["rule_set_revision"] != 1.0 {
		t.Errorf("narrowed ranges: revision %v, rule_set_revision %v; want 3 and 1", narrowed["revision"], narrowed["rule_set_revision"])
	}
	e.do(http.MethodPut, "/v1/coupons/"+coupon, "technician", withRevision(e.do(http.MethodGet, "/v1/coupons/"+coupon, "auditor", nil).object(t), 1, "typo"))
	for _, c := range []struct {
		path string
		want float64
	}{
		{"/v1/coupons/" + coupon + "?revision=1", 1},
		{"/v1/coupons/" + coupon, 2},
		{"/v1/rule-sets/structural-style-gmaw?revision=1", 1},
		{"/v1/procedures/" + proc + "/ranges?revision=1", 1},
		{"/v1/procedures/" + proc + "/ranges", 3},
	} {
		r := e.do(http.MethodGet, c.path, "auditor", nil)
		if r.status != http.StatusOK || r.object(t)["revision"] != c.want {
			t.Errorf("GET %s = %d %s, want revision %v", c.path, r.status, r.body, c.want)
		}
	}
	for _, path := range []string{"/v1/rule-sets/structural-style-gmaw?version=1", "/v1/procedures/" + proc + "/ranges?version=1"} {
		wantProblem(t, path, e.do(http.MethodGet, path, "auditor", nil), http.StatusBadRequest, "version")
	}
	sum := e.do(http.MethodGet, "/v1/procedures/"+proc+"/flag-summary", "auditor", nil).object(t)
	if sum["ranges_revision"] != 3.0 {
		t.Errorf("flag summary ranges_revision = %v, want 3", sum["ranges_revision"])
	}
}

// TestConventionFitDays: a fit selects its coupons' welding days half-open
// too, takes a day or an RFC 3339 time, and answers the bound as given.
func TestConventionFitDays(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(6, 0) // welded 2026-11-01 to 2026-11-06, one a day
	cal := e.fit(calibrationBody("jackson_fixed", map[string]any{"welded_from": "2026-11-02", "welded_to": "2026-11-04T12:00:00Z"}))
	if len(cal.CouponIDs) != 3 {
		t.Errorf("fit over [2026-11-02, 2026-11-04T12:00Z) used %d coupons, want 3 (days 2, 3 and 4)", len(cal.CouponIDs))
	}
	got := e.do(http.MethodGet, "/v1/calibrations/"+cal.ID, "auditor", nil).object(t)
	if got["welded_from"] != "2026-11-02" || got["welded_to"] != "2026-11-05" {
		t.Errorf("fit days = [%v, %v), want [2026-11-02, 2026-11-05)", got["welded_from"], got["welded_to"])
	}
	same := e.fit(calibrationBody("jackson_fixed", map[string]any{"welded_from": got["welded_from"], "welded_to": got["welded_to"]}))
	if !slices.Equal(same.CouponIDs, cal.CouponIDs) {
		t.Errorf("the answered days sent again select %v, want %v", same.CouponIDs, cal.CouponIDs)
	}
	wantProblem(t, "empty day range", e.do(http.MethodPost, "/v1/calibrations", "engineer",
		calibrationBody("jackson_fixed", map[string]any{"welded_from": "2026-11-03", "welded_to": "2026-11-03"})), http.StatusUnprocessableEntity, "welded_to")
	wantProblem(t, "not a day", e.do(http.MethodPost, "/v1/calibrations", "engineer",
		calibrationBody("jackson_fixed", map[string]any{"welded_to": "11/03/2026"})), http.StatusBadRequest, "welded_to")
}
