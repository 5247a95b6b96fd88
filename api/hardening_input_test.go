package api_test

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"strings"
	"testing"
	"time"
)

// TestControlCharacters sends text holding control characters: PostgreSQL
// cannot store U+0000 in text (PostgreSQL manual, "Character Types": the
// character with code zero cannot be stored), and the other C0/C1 controls
// (Unicode general category Cc) have no place in a mark or a name. A body
// field is refused with 422 naming it; a query or path parameter with 400.
func TestControlCharacters(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.procedure()
	for _, tc := range []struct {
		name, field, value string
		status             int
	}{
		{"NULInMark", "coupon_mark", "C-\x00-1", http.StatusUnprocessableEntity},
		{"NULInWelder", "welder_id", "W\x00", http.StatusUnprocessableEntity},
		{"EscapeInLot", "filler_lot", "L\x1b[31m", http.StatusUnprocessableEntity},
		{"DELInPosition", "position", "2F\x7f", http.StatusUnprocessableEntity},
		{"C1InGas", "shielding_gas", "Ar\u0085CO2", http.StatusUnprocessableEntity},
		{"TabInMark", "coupon_mark", "C\t1", http.StatusUnprocessableEntity},
	} {
		t.Run("Body/"+tc.name, func(t *testing.T) {
			b := couponBody(proc, "", uniq("C"))
			b[tc.field] = tc.value
			wantProblem(t, tc.name, e.do(http.MethodPost, "/v1/coupons", "technician", b), tc.status, tc.field)
		})
	}
	t.Run("Body/Nested", func(t *testing.T) {
		rec := productionRecordBody(proc, "J\x00-1")
		r := e.do(http.MethodPost, "/v1/production-records", "technician", map[string]any{"records": []any{rec}})
		wantProblem(t, "NUL in a batch row", r, http.StatusUnprocessableEntity, "records[0].weld_id")
	})
	t.Run("Body/RemarkMayBreakLines", func(t *testing.T) {
		m := measurementBody("A")
		m["remark"] = "root fused\n\tslag line at toe"
		e.create("/v1/coupons/"+e.coupon()+"/measurements", "technician", m)
		m["remark"] = "root\x00fused"
		wantProblem(t, "NUL in a remark", e.do(http.MethodPost, "/v1/coupons/"+e.coupon()+"/measurements", "technician", m),
			http.StatusUnprocessableEntity, "remark")
	})
	for _, path := range []string{
		"/v1/coupons?welder_id=W%00",
		"/v1/coupons?welder_id=W%01",
		"/v1/production-records?weld_id=%00",
		"/v1/audit/events?actor=a%00",
		"/v1/flags?variable=%C2%85",
	} {
		t.Run("Query/"+path, func(t *testing.T) {
			name := path[strings.Index(path, "?")+1 : strings.Index(path, "=")]
			wantProblem(t, path, e.do(http.MethodGet, path, "auditor", nil), http.StatusBadRequest, name)
		})
	}
	t.Run("Path", func(t *testing.T) {
		wantProblem(t, "NUL in a rule set id", e.do(http.MethodGet, "/v1/rule-sets/x%00y", "auditor", nil), http.StatusBadRequest, "rule_set_id")
	})
}

// productionRecordBody is one production record row of plausible GMAW values.
func productionRecordBody(procedureID, weldID string) map[string]any {
	return map[string]any{"procedure_id": procedureID, "weld_id": weldID, "welder_id": "W-07",
		"recorded_at": "2026-11-20T09:30:00Z", "current_a": 180.0, "voltage_v": 21.0,
		"travel_speed_mm_s": 5.0, "wire_feed_speed_m_min": 7.6, "ctwd_mm": 15.0}
}

// TestIntegerBounds asks for revisions and versions past PostgreSQL's integer
// range (-2147483648 to +2147483647, PostgreSQL manual "Numeric Types"): a
// refusal naming the parameter, never a 500.
func TestIntegerBounds(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	id := e.coupon()
	for _, path := range []string{
		"/v1/coupons/" + id + "?revision=2147483648",
		"/v1/coupons/" + id + "?revision=99999999999999999999",
		"/v1/rule-sets/structural-style-gmaw?revision=2147483648",
		"/v1/procedures/" + e.procedure() + "/ranges?revision=4294967296",
	} {
		r := e.do(http.MethodGet, path, "auditor", nil)
		if r.status != http.StatusBadRequest && r.status != http.StatusUnprocessableEntity {
			t.Errorf("GET %s = %d %s, want 400 or 422", path, r.status, r.body)
		}
		name := path[strings.Index(path, "?")+1 : strings.Index(path, "=")]
		wantProblem(t, path, r, r.status, name)
	}
	// Log sizes are bigint: a size past the integer range is simply not a
	// checkpoint there is (found by the long spec walk as a 500).
	if r := e.do(http.MethodGet, "/v1/log/consistency?from=1&to=2147483648", "auditor", nil); r.status >= 500 {
		t.Errorf("consistency to 2147483648 = %d", r.status)
	}
	r := e.do(http.MethodPut, "/v1/coupons/"+id, "technician", withRevision(couponBody(e.procedure(), "", uniq("C")), 2147483647, "typo"))
	wantProblem(t, "base_revision at the integer limit", r, http.StatusUnprocessableEntity, "base_revision")
	r = e.do(http.MethodPut, "/v1/coupons/"+id, "technician", withRevision(couponBody(e.procedure(), "", uniq("C")), 1<<40, "typo"))
	wantProblem(t, "base_revision past the integer limit", r, http.StatusUnprocessableEntity, "base_revision")
}

// TestDuplicateKeyAndUTF8 sends a body repeating a key (RFC 8259 section 4:
// names within an object SHOULD be unique; the receiver's choice is then
// unpredictable) and a body with a byte that is not UTF-8 (RFC 8259 section
// 8.1: JSON text exchanged between systems MUST be UTF-8): 400.
func TestDuplicateKeyAndUTF8(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	js, _ := json.Marshal(couponBody(e.procedure(), "", uniq("C")))
	dup := strings.Replace(string(js), `{`, `{"welder_id":"W-01",`, 1)
	wantProblem(t, "a repeated key", e.do(http.MethodPost, "/v1/coupons", "technician", dup), http.StatusBadRequest, "welder_id")
	nested := `{"records":[{"weld_id":"J1","weld_id":"J2"}]}`
	wantProblem(t, "a repeated key in a row", e.do(http.MethodPost, "/v1/production-records", "technician", nested), http.StatusBadRequest, "records[0].weld_id")
	bad := bytes.Replace(js, []byte(`"W-07"`), []byte("\"W-\xff7\""), 1)
	wantProblem(t, "a byte that is not UTF-8", e.do(http.MethodPost, "/v1/coupons", "technician", bad), http.StatusBadRequest, "body")
}

// TestBlankIdentifier sends identifiers of only white space: 422 naming each.
func TestBlankIdentifier(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, f := range []string{"coupon_mark", "welder_id", "filler_lot", "power_source_id"} {
		b := couponBody(e.procedure(), "", uniq("C"))
		b[f] = "   "
		wantProblem(t, f+" of three spaces", e.do(http.MethodPost, "/v1/coupons", "technician", b), http.StatusUnprocessableEntity, f)
	}
	b := qualificationRecordBody(" \t ")
	wantProblem(t, "record_number of white space", e.do(http.MethodPost, "/v1/qualification-records", "engineer", b), http.StatusUnprocessableEntity, "record_number")
	r := e.do(http.MethodPost, "/v1/production-records", "technician", map[string]any{"records": []any{productionRecordBody(e.procedure(), "  ")}})
	wantProblem(t, "weld_id of white space", r, http.StatusUnprocessableEntity, "records[0].weld_id")
}

// TestWeldDate refuses weld dates before 1900-01-01 or more than one day
// after today (UTC), the rule stated in the API description.
func TestWeldDate(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	today := time.Now().UTC()
	for _, tc := range []struct {
		day  string
		want int
	}{
		{"0000-01-01", http.StatusUnprocessableEntity},
		{"1899-12-31", http.StatusUnprocessableEntity},
		{"1900-01-01", http.StatusCreated},
		{today.AddDate(0, 0, 1).Format(time.DateOnly), http.StatusCreated},
		{today.AddDate(0, 0, 2).Format(time.DateOnly), http.StatusUnprocessableEntity},
		{"2099-01-01", http.StatusUnprocessableEntity},
		{"9999-12-31", http.StatusUnprocessableEntity},
	} {
		b := couponBody(e.procedure(), "", uniq("C"))
		b["welded_on"] = tc.day
		r := e.do(http.MethodPost, "/v1/coupons", "technician", b)
		if tc.want == http.StatusCreated {
			if r.status != tc.want {
				t.Errorf("welded_on %s = %d %s, want 201", tc.day, r.status, r.body)
			}
			continue
		}
		wantProblem(t, "welded_on "+tc.day, r, tc.want, "welded_on")
		q := qualificationRecordBody(uniq("PQR"))
		q["welded_on"] = tc.day
		wantProblem(t, "PQR welded_on "+tc.day, e.do(http.MethodPost, "/v1/qualification-records", "engineer", q), tc.want, "welded_on")
	}
	rec := productionRecordBody(e.procedure(), uniq("J"))
	rec["recorded_at"] = "2099-01-01T00:00:00Z"
	r := e.do(http.MethodPost, "/v1/production-records", "technician", map[string]any{"records": []any{rec}})
	wantProblem(t, "recorded_at in 2099", r, http.StatusUnprocessableEntity, "records[0].recorded_at")
}

// TestRepeatedWeld logs the same weld id twice on one procedure: 409 naming
// the earlier production record, in a later batch and within one batch (422).
func TestRepeatedWeld(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.procedure()
	weld := uniq("J")
	first := e.create("/v1/production-records", "technician", map[string]any{"records": []any{productionRecordBody(proc, weld)}})
	firstID := first["items"].([]any)[0].(map[string]any)["id"].(string)
	r := e.do(http.MethodPost, "/v1/production-records", "technician",
		map[string]any{"records": []any{productionRecordBody(proc, uniq("J")), productionRecordBody(proc, weld)}})
	p := wantProblem(t, "a weld logged again", r, http.StatusConflict, "records[1].weld_id")
	if p.ExistingID != firstID || !strings.Contains(p.Detail, firstID) {
		t.Errorf("repeated weld: existing_id %q detail %q, want the earlier record %s", p.ExistingID, p.Detail, firstID)
	}
	again := uniq("J")
	r = e.do(http.MethodPost, "/v1/production-records", "technician",
		map[string]any{"records": []any{productionRecordBody(proc, again), productionRecordBody(proc, again)}})
	wantProblem(t, "a weld twice in one batch", r, http.StatusUnprocessableEntity, "records[1].weld_id")
	// The same weld id on another procedure is another weld.
	e.create("/v1/production-records", "technician", map[string]any{"records": []any{productionRecordBody(e.mustProcedure(), weld)}})
}

// TestChunkedOverLimit streams a body of unknown length past the 1 MiB limit:
// 413 (RFC 9110 section 15.5.14, Content Too Large), as for a declared length.
func TestChunkedOverLimit(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	body := io.MultiReader(strings.NewReader(`{"records":[`), strings.NewReader(strings.Repeat("1,", 600_000)+"1]}"))
	req, _ := http.NewRequest(http.MethodPost, e.url+"/v1/production-records", io.NopCloser(body))
	req.ContentLength = -1 // sent chunked
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("Authorization", "Bearer "+e.tokens["technician"])
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	if len(res.TransferEncoding) == 0 && res.Request.ContentLength != -1 {
		t.Fatalf("the request was not sent chunked")
	}
	wantProblem(t, "chunked body over the limit", reply{res.StatusCode, res.Header, b}, http.StatusRequestEntityTooLarge, "")
}

// TestErrorListBounded sends bodies with a fault per item: the answer lists
// at most 50 fields, each once, counts the rest, and stays small.
func TestErrorListBounded(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	items := strings.Repeat("1,", 9_999) + "1"
	props := make([]string, 10_000)
	for i := range props {
		props[i] = fmt.Sprintf(`"unknown_%d":1`, i)
	}
	for _, tc := range []struct{ name, path, role, body string }{
		{"BatchOfNumbers", "/v1/production-records", "technician", `{"records":[` + items + `]}`},
		{"ThousandsOfUnknownFields", "/v1/predictions", "auditor", "{" + strings.Join(props, ",") + "}"},
		{"SmallBatchOfNumbers", "/v1/production-records", "technician", `{"records":[1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1,1]}`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r := e.do(http.MethodPost, tc.path, tc.role, tc.body)
			p := wantProblem(t, tc.name, r, http.StatusBadRequest, "")
			seen := map[string]bool{}
			for _, is := range p.Errors {
				k := is.Field + "\x00" + is.Reason
				if seen[k] {
					t.Errorf("%s: %s listed twice", tc.name, is.Field)
				}
				seen[k] = true
			}
			if len(p.Errors) == 0 || len(p.Errors) > 50 {
				t.Errorf("%s: %d errors listed, want 1 to 50", tc.name, len(p.Errors))
			}
			if len(r.body) > 16<<10 {
				t.Errorf("%s: answer of %d bytes for a body of %d, want at most 16 KiB", tc.name, len(r.body), len(tc.body))
			}
			if tc.name == "SmallBatchOfNumbers" && (len(p.Errors) != 50 || p.ErrorsOmitted != 10) {
				t.Errorf("%s: %d listed + %d omitted, want 50 + 10", tc.name, len(p.Errors), p.ErrorsOmitted)
			}
		})
	}
}
