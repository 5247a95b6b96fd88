package api_test

import (
	"bytes"
	"encoding/json"
	"net/http"
	"strings"
	"testing"
)

// TestMalformedBody sends bodies that are not one JSON object to every write
// of every kind (create, correct, void): 400.
func TestMalformedBody(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	bodies := []struct{ name, body, field string }{
		{"Truncated", `{"section": "A", "penetration_mm":`, "body"},
		{"NotJSON", `section=A&penetration_mm=1.8`, "body"},
		{"Empty", ``, "body"},
		{"Array", `[]`, "body"},
		{"Null", `null`, "body"},
		{"String", `"A"`, "body"},
		{"SingleQuotes", `{'section': 'A'}`, "body"},
	}
	for _, k := range inputKinds() {
		id := e.create(k.path(e), k.role, k.body(e))["id"].(string)
		writes := []struct{ name, method, path string }{
			{"Create", http.MethodPost, k.path(e)},
			{"Correct", http.MethodPut, k.read + "/" + id},
			{"Void", http.MethodPost, k.read + "/" + id + "/void"},
		}
		for _, w := range writes {
			for _, b := range bodies {
				t.Run(k.name+"/"+w.name+"/"+b.name, func(t *testing.T) {
					wantProblem(t, b.name+" body", e.do(w.method, w.path, k.role, b.body), http.StatusBadRequest, b.field)
				})
			}
		}
		t.Run(k.name+"/Create/TrailingData", func(t *testing.T) {
			js, _ := json.Marshal(k.body(e))
			r := e.do(http.MethodPost, k.path(e), k.role, string(js)+` {"section": "B"}`)
			wantProblem(t, "a second JSON value after the body", r, http.StatusBadRequest, "body")
		})
	}
}

// TestBodyLimit sends a create body of exactly 1 MiB (accepted) and one byte
// more (413), the documented limit.
func TestBodyLimit(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	const limit = 1 << 20
	path := "/v1/coupons/" + e.coupon() + "/measurements"
	js, _ := json.Marshal(measurementBody("A"))
	padded := func(n int) []byte { // a valid body padded with whitespace to n bytes
		b := bytes.TrimSuffix(js, []byte("}"))
		b = append(b, bytes.Repeat([]byte(" "), n-len(b)-1)...)
		return append(b, '}')
	}
	if r := e.do(http.MethodPost, path, "technician", padded(limit)); r.status != http.StatusCreated {
		t.Errorf("body of exactly 1 MiB: status = %d %s, want 201", r.status, r.body)
	}
	r := e.do(http.MethodPost, path, "technician", padded(limit+1))
	wantProblem(t, "body of 1 MiB + 1 byte", r, http.StatusRequestEntityTooLarge, "")
	big := `{"section": "A", "remark": "` + strings.Repeat("x", 2*limit) + `"}`
	r = e.do(http.MethodPut, "/v1/coupons/"+e.coupon(), "technician", big)
	wantProblem(t, "correction body of 2 MiB", r, http.StatusRequestEntityTooLarge, "")
}
