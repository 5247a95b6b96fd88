package api_test

import (
	"encoding/json"
	"net/http"
	"regexp"
	"slices"
	"strings"
	"testing"

	"github.com/google/uuid"
)

// More of the conventions in DEVELOPERS.md ("Conventions"): refusals in the
// user's words, a read sent back as a correction, one word for numbered states,
// and half-open welding days in fits.

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
