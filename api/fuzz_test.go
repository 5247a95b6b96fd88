package api_test

import (
	"bytes"
	"encoding/json"
	"math/rand/v2"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"

	"github.com/google/uuid"
)

// fuzzEnv is the server over the test database with fixture ids for paths.
func fuzzEnv(f *testing.F) (*testEnv, *walker, []walkOp) {
	e := newEnv(f)
	coupon := e.coupon()
	ids := map[string]string{
		"procedures": e.procedure(), "qualification-records": e.pqr(), "coupons": coupon,
		"measurements": e.mustMeasurement(coupon), "calibrations": uuid.NewString(),
		"procedure_id": e.procedure(), "qualification_record_id": e.pqr(), "coupon_id": coupon,
	}
	return e, &walker{e: e, rng: rand.New(rand.NewPCG(1, 2)), ids: ids}, specOps(f)
}

// fill puts fixture ids into an operation's path.
func (w *walker) fill(op walkOp) string {
	path := op.path
	for _, pr := range op.params {
		if p := pr.Value; p.In == "path" {
			val := w.ids[pathKind(op.path)]
			if p.Name == "rule_set_id" {
				val = "structural-style-gmaw"
			}
			path = strings.Replace(path, "{"+p.Name+"}", val, 1)
		}
	}
	return path
}

// serve runs one request through the server in-process and fails on a 5xx.
func (w *walker) serve(t *testing.T, method, target, role string, body []byte) {
	req, err := http.NewRequest(method, w.e.url+target, bytes.NewReader(body))
	if err != nil {
		t.Skip("not a request a client could send")
	}
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("Authorization", "Bearer "+w.e.tokens[role])
	rec := httptest.NewRecorder()
	w.e.srv.ServeHTTP(rec, req)
	if rec.Code >= 500 {
		t.Fatalf("%s %s with %q = %d %s", method, target, body, rec.Code, rec.Body.Bytes())
	}
}

// FuzzRequestBody sends arbitrary bytes as the body of every operation that
// takes one (decoding, the spec check, validation, unit conversion and the
// write behind them), seeded with a body built from each request schema of
// openapi.yaml and the fixtures' valid bodies. No answer may be a 5xx.
// Run: go test ./api -run XXX -fuzz FuzzRequestBody -fuzztime 60s
func FuzzRequestBody(f *testing.F) {
	_, w, all := fuzzEnv(f)
	var ops []walkOp
	for _, op := range all {
		if op.body != nil {
			ops = append(ops, op)
		}
	}
	for i, op := range ops {
		b, _ := json.Marshal(w.example(op.body, "body", 0))
		f.Add(uint8(i), b)
		if base := w.base(op); base != nil {
			b, _ := json.Marshal(base)
			f.Add(uint8(i), b)
		}
	}
	f.Fuzz(func(t *testing.T, i uint8, body []byte) {
		op := ops[int(i)%len(ops)]
		w.serve(t, op.method, w.fill(op), op.role, body)
	})
}

// FuzzQueryString sends arbitrary query strings to every read that takes
// query parameters, seeded with each parameter set to a value built
// from its schema. No answer may be a 5xx.
// Run: go test ./api -run XXX -fuzz FuzzQueryString -fuzztime 60s
func FuzzQueryString(f *testing.F) {
	_, w, all := fuzzEnv(f)
	var ops []walkOp
	for _, op := range all {
		for _, p := range op.params {
			if p.Value.In == "query" && op.method == http.MethodGet {
				ops = append(ops, op)
				break
			}
		}
	}
	for i, op := range ops {
		q := url.Values{}
		for _, p := range op.params {
			if p.Value.In == "query" {
				b, _ := json.Marshal(w.example(p.Value.Schema.Value, p.Value.Name, 0))
				q.Set(p.Value.Name, strings.Trim(string(b), `"`))
			}
		}
		f.Add(uint8(i), q.Encode())
	}
	f.Add(uint8(0), "welder_id=W%00")
	f.Add(uint8(0), "revision=2147483648")
	f.Fuzz(func(t *testing.T, i uint8, query string) {
		op := ops[int(i)%len(ops)]
		w.serve(t, op.method, w.fill(op)+"?"+query, op.role, nil)
	})
}
