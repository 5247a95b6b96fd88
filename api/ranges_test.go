package api_test

import (
	"fmt"
	"math"
	"net/http"
	"testing"
)

// The fixture PQR (qualificationRecordBody) welded 280 A, 29 V, 6 mm/s,
// 9.5 m/min, CTWD 19 mm. Under the structural-style set (from memory:
// current ±10 % of the PQR value) the current range is [252, 308] A.

// rangedProcedure stores a PQR and a procedure it supports, derives the
// procedure's ranges under the structural-style set and returns its id.
func (e *testEnv) rangedProcedure() string {
	e.t.Helper()
	pqr := e.mustQualificationRecord()
	proc := e.create("/v1/procedures", "engineer", procedureBody(uniq("WPS"), pqr))["id"].(string)
	r := e.create("/v1/procedures/"+proc+"/ranges", "engineer", map[string]any{"rule_set_id": "structural-style-gmaw"})
	if r["revision"] != 1.0 {
		e.t.Fatalf("derived ranges version = %v, want 1", r["revision"])
	}
	return proc
}

// productionBody is one production record row (fixture values) at current a.
func productionBody(proc, weld string, a float64) map[string]any {
	return map[string]any{"procedure_id": proc, "weld_id": weld, "welder_id": "W-07",
		"recorded_at": "2026-11-20T09:30:00Z", "current_a": a, "voltage_v": 29.0,
		"travel_speed_mm_s": 6.0, "wire_feed_speed_m_min": 9.5, "ctwd_mm": 19.0}
}

// flagsOfRecord returns the flags of the first record a batch answer holds.
func flagsOfRecord(tb testing.TB, rec map[string]any) []map[string]any {
	tb.Helper()
	var out []map[string]any
	for _, f := range rec["flags"].([]any) {
		out = append(out, f.(map[string]any))
	}
	return out
}

func TestProductionRecordFlagged(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	// 320 A is 12 A above 308 A: 12/308 = 3.896 % of the edge crossed.
	r := e.create("/v1/production-records", "technician", map[string]any{"records": []any{productionBody(proc, "B-1", 320)}})
	recs := r["items"].([]any)
	flags := flagsOfRecord(t, recs[0].(map[string]any))
	if len(flags) != 1 || flags[0]["variable"] != "current_a" || flags[0]["direction"] != "above" ||
		math.Abs(flags[0]["excess"].(float64)-12) > 1e-9 || math.Abs(flags[0]["excess_pct"].(float64)-1200.0/308) > 1e-9 {
		t.Fatalf("flags = %v, want current_a above by 12 A (3.9 %%)", flags)
	}
	// The same weld in inch-pound spellings: 14.1732 ipm = 6 mm/s, 374.0157 ipm = 9.5 m/min (1 in = 25.4 mm).
	inch := productionBody(proc, "B-2", 280)
	delete(inch, "travel_speed_mm_s")
	delete(inch, "wire_feed_speed_m_min")
	delete(inch, "ctwd_mm")
	inch["travel_speed_in_min"], inch["wire_feed_speed_in_min"], inch["ctwd_in"] = 6*60/25.4, 9500/25.4, 0.75
	got := e.create("/v1/production-records", "technician", map[string]any{"records": []any{inch}})["items"].([]any)[0].(map[string]any)
	if len(flagsOfRecord(t, got)) != 0 || math.Abs(got["travel_speed_mm_s"].(float64)-6) > 1e-12 || math.Abs(got["ctwd_mm"].(float64)-19.05) > 1e-12 {
		t.Errorf("inch record = %v, want 6 mm/s, 19.05 mm and no flag", got)
	}
	sum := e.do(http.MethodGet, "/v1/procedures/"+proc+"/flag-summary", "auditor", nil).object(t)
	if sum["total"] != 1.0 || sum["flagged_production_records"] != 1.0 {
		t.Errorf("flag summary = %v, want 1 flag on 1 production record", sum)
	}
	wantProblem(t, "auditor writes", e.do(http.MethodPost, "/v1/production-records", "auditor",
		map[string]any{"records": []any{productionBody(proc, "B-3", 280)}}), http.StatusForbidden, "")
}

func TestNarrowInInchesThroughAPI(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	path := "/v1/procedures/" + proc + "/ranges/narrow"
	// The structural-style set has no CTWD rule: a 0.5–0.75 in limit is 12.7–19.05 mm.
	body := map[string]any{"base_revision": 1, "reason": "shop practice", "variables": []any{
		map[string]any{"variable": "ctwd_in", "min": 0.5, "max": 0.75}}}
	if r := e.create(path, "engineer", body); r["revision"] != 2.0 {
		t.Fatalf("narrowed version = %v, want 2", r["revision"])
	}
	batch := []any{}
	for i, ctwd := range []float64{12.7, 19.05, 19.06, 12.69} { // edge, edge, just outside, just outside
		b := productionBody(proc, fmt.Sprintf("N-%d", i), 280)
		b["ctwd_mm"] = ctwd
		batch = append(batch, b)
	}
	recs := e.create("/v1/production-records", "technician", map[string]any{"records": batch})["items"].([]any)
	for i, want := range []string{"", "", "above", "below"} {
		flags := flagsOfRecord(t, recs[i].(map[string]any))
		if want == "" && len(flags) != 0 || want != "" && (len(flags) != 1 || flags[0]["direction"] != want) {
			t.Errorf("CTWD %v mm: flags = %v, want %q", batch[i].(map[string]any)["ctwd_mm"], flags, want)
		}
	}
	for _, c := range []struct {
		name   string
		body   map[string]any
		status int
		field  string
	}{
		{"Widens", map[string]any{"base_revision": 2, "reason": "r", "variables": []any{map[string]any{"variable": "current_a", "max": 320}}}, 422, "variables[0].max"},
		{"Stale", map[string]any{"base_revision": 1, "reason": "r", "variables": []any{map[string]any{"variable": "current_a", "max": 300}}}, 409, ""},
		{"UnknownVariable", map[string]any{"base_revision": 2, "reason": "r", "variables": []any{map[string]any{"variable": "stickout_in", "max": 1}}}, 422, "variables[0].variable"},
		{"NoReason", map[string]any{"base_revision": 2, "reason": "", "variables": []any{map[string]any{"variable": "current_a", "max": 300}}}, 422, "reason"},
	} {
		t.Run(c.name, func(t *testing.T) {
			wantProblem(t, c.name, e.do(http.MethodPost, path, "engineer", c.body), c.status, c.field)
		})
	}
	wantProblem(t, "technician narrows", e.do(http.MethodPost, path, "technician", body), http.StatusForbidden, "")
	if v := e.do(http.MethodGet, "/v1/procedures/"+proc+"/ranges", "auditor", nil).object(t)["revision"]; v != 2.0 {
		t.Errorf("ranges version after refused narrowings = %v, want 2", v)
	}
}

func TestProductionBatchAPI(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	batch := make([]any, 500)
	for i := range batch {
		batch[i] = productionBody(proc, fmt.Sprintf("P-%03d", i), 280)
	}
	batch[250].(map[string]any)["current_a"] = 250.0 // 2 A below 252 A
	if n := len(e.create("/v1/production-records", "technician", map[string]any{"records": batch})["items"].([]any)); n != 500 {
		t.Fatalf("batch of 500: %d stored", n)
	}
	bad := make([]any, 40)
	for i := range bad {
		bad[i] = productionBody(proc, fmt.Sprintf("Q-%03d", i), 280)
	}
	bad[17].(map[string]any)["current_a"] = 5000.0
	wantProblem(t, "row 17 at 5000 A", e.do(http.MethodPost, "/v1/production-records", "technician", map[string]any{"records": bad}),
		http.StatusUnprocessableEntity, "records[17].current_a")
	delete(bad[17].(map[string]any), "voltage_v")
	bad[17].(map[string]any)["current_a"] = 280.0
	// A plain number left out reads as 0, refused like the coupon's fields (422).
	wantProblem(t, "row 17 without voltage", e.do(http.MethodPost, "/v1/production-records", "technician", map[string]any{"records": bad}),
		http.StatusUnprocessableEntity, "records[17].voltage_v")
	list := e.do(http.MethodGet, "/v1/production-records?procedure_id="+proc+"&limit=500", "auditor", nil).object(t)
	rest := e.do(http.MethodGet, "/v1/production-records?procedure_id="+proc+"&limit=500&cursor="+fmt.Sprint(list["next_cursor"]), "auditor", nil).items(t)
	if n := len(list["items"].([]any)); n != 500 || len(rest) != 0 {
		t.Errorf("after the refused batches: %d records listed and %d after them, want the 500 of the good batch", n, len(rest))
	}
	flags := e.do(http.MethodGet, "/v1/flags?subject_kind=production_record&kind=range&variable=current_a&procedure_id="+proc, "auditor", nil).items(t)
	if len(flags) != 1 || flags[0]["direction"] != "below" || math.Abs(flags[0]["excess"].(float64)-2) > 1e-9 {
		t.Errorf("current flags = %v, want one 2 A below", flags)
	}
	if got := e.do(http.MethodGet, "/v1/flags?procedure_id="+proc+"&from=2026-11-21", "auditor", nil).items(t); len(got) != 0 {
		t.Errorf("flags from the next day = %v, want none", got)
	}
}

func TestRuleSetsAPI(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	if items := e.do(http.MethodGet, "/v1/rule-sets", "auditor", nil).items(t); len(items) != 2 {
		t.Errorf("rule sets = %d, want the 2 built-in", len(items))
	}
	// 25 °F of preheat drop is 25·5/9 °C of difference (°C = (°F − 32)·5/9, NIST SP 811).
	body := map[string]any{"id": "shop-gmaw", "name": "shop GMAW", "process": "GMAW", "notes": "fixture", "rules": []any{
		map[string]any{"variable": "preheat_f", "kind": "absolute_band", "below": 25}}}
	rs := e.create("/v1/rule-sets", "engineer", body)
	rule := rs["rules"].([]any)[0].(map[string]any)
	if rule["variable"] != "preheat_c" || rule["below"] != answered(125.0/9) || rs["revision"] != 1.0 {
		t.Errorf("stored rule = %v (version %v), want preheat_c below 13.889 °C, version 1", rule, rs["revision"])
	}
	if v := e.do(http.MethodGet, "/v1/rule-sets/shop-gmaw", "technician", nil).object(t)["revision"]; v != 1.0 {
		t.Errorf("GET rule set version = %v, want 1", v)
	}
	body["rules"] = []any{map[string]any{"variable": "preheat_c", "kind": "percent_band", "below_pct": 10}}
	wantProblem(t, "percent of °C", e.do(http.MethodPost, "/v1/rule-sets", "engineer", body), http.StatusUnprocessableEntity, "rules[0].kind")
	wantProblem(t, "technician writes", e.do(http.MethodPost, "/v1/rule-sets", "technician", body), http.StatusForbidden, "")
	wantProblem(t, "unknown rule set", e.do(http.MethodGet, "/v1/rule-sets/no-such-set", "auditor", nil), http.StatusNotFound, "")
}
