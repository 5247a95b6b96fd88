package api_test

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math/rand/v2"
	"net/http"
	"net/url"
	"os"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/google/uuid"

	"etchlog/openapi"
)

// walkOp is one operation of the document with what the walker needs.
type walkOp struct {
	method, path string
	op           *openapi3.Operation
	params       openapi3.Parameters
	body         *openapi3.Schema
	role         string
}

// specOps lists every operation of openapi.yaml, sorted.
func specOps(tb testing.TB) []walkOp {
	tb.Helper()
	doc, err := openapi3.NewLoader().LoadFromData(openapi.Spec)
	if err != nil {
		tb.Fatal(err)
	}
	var ops []walkOp
	for path, item := range doc.Paths.Map() {
		for method, op := range item.Operations() {
			w := walkOp{method: method, path: path, op: op, params: append(slices.Clone(item.Parameters), op.Parameters...), role: "engineer"}
			if op.RequestBody != nil && op.RequestBody.Value != nil {
				if mt := op.RequestBody.Value.Content.Get("application/json"); mt != nil && mt.Schema != nil {
					w.body = mt.Schema.Value
				}
			}
			if strings.Contains(op.Description, "Roles: any") && method == http.MethodGet {
				w.role = "auditor"
			}
			ops = append(ops, w)
		}
	}
	sort.Slice(ops, func(i, j int) bool { return ops[i].path+ops[i].method < ops[j].path+ops[j].method })
	return ops
}

// walker builds valid-looking requests from the document's schemas and
// mutates them.
type walker struct {
	e   *testEnv
	rng *rand.Rand
	ids map[string]string // fixture ids by field or path parameter name
}

// example builds a value for schema: required fields always, optional ones
// at random, numbers inside their bounds, enums' first word, fixture ids.
func (w *walker) example(s *openapi3.Schema, name string, depth int) any {
	if s == nil || depth > 6 {
		return nil
	}
	if len(s.AllOf) > 0 {
		out := map[string]any{}
		for _, ref := range s.AllOf {
			if m, ok := w.example(ref.Value, name, depth+1).(map[string]any); ok {
				for k, v := range m {
					out[k] = v
				}
			}
		}
		return out
	}
	for _, alt := range [][]*openapi3.SchemaRef{s.OneOf, s.AnyOf} {
		if len(alt) > 0 {
			return w.example(alt[w.rng.IntN(len(alt))].Value, name, depth+1)
		}
	}
	if len(s.Enum) > 0 {
		return s.Enum[w.rng.IntN(len(s.Enum))]
	}
	switch {
	case s.Type.Is("object"):
		out := map[string]any{}
		for k, p := range s.Properties {
			if slices.Contains(s.Required, k) || w.rng.IntN(3) == 0 {
				out[k] = w.example(p.Value, k, depth+1)
			}
		}
		return out
	case s.Type.Is("array"):
		n := int(s.MinItems)
		if n == 0 {
			n = 1
		}
		out := make([]any, n)
		for i := range out {
			out[i] = w.example(s.Items.Value, name, depth+1)
		}
		return out
	case s.Type.Is("integer"), s.Type.Is("number"):
		lo, hi := 1.0, 10.0
		if s.Min != nil {
			lo = *s.Min
		}
		if s.Max != nil {
			hi = *s.Max
		}
		v := lo + (hi-lo)*w.rng.Float64()/8
		if s.Type.Is("integer") {
			return int64(v)
		}
		return v
	case s.Type.Is("boolean"):
		return w.rng.IntN(2) == 0
	}
	switch s.Format {
	case "uuid":
		if id, ok := w.ids[name]; ok {
			return id
		}
		return uuid.NewString()
	case "date":
		return "2026-11-03"
	case "date-time":
		return "2026-11-20T09:30:00Z"
	}
	if name == "rule_set_id" {
		return "walk-" + strconv.Itoa(w.rng.IntN(1e6))
	}
	return fmt.Sprintf("%s-%d", strings.ToUpper(name[:min(1, len(name))]), w.rng.IntN(1e6))
}

// hostile values a client might send in place of any other.
var hostile = []any{
	"", "   ", "\x00", "W\x00", "\x1b[2J", "\u0085", "\t", strings.Repeat("x", 70), strings.Repeat("é", 3000),
	0, -1, 1e308, -1e308, 2147483648, -2147483649, 9.999999999999999e22, 1.5, true, nil,
	[]any{}, []any{1, 1, 1}, map[string]any{}, map[string]any{"x": 1}, "0000-01-01", "9999-12-31", "2099-01-01",
	"not-a-uuid", "00000000-0000-0000-0000-000000000000", "1900-01-01T00:00:00Z", "NaN", "Infinity",
}

// pick returns one hostile value, maps and slices copied so that no two
// requests share (and mutate) one.
func (w *walker) pick() any {
	switch v := hostile[w.rng.IntN(len(hostile))].(type) {
	case map[string]any:
		c := make(map[string]any, len(v))
		for k, x := range v {
			c[k] = x
		}
		return c
	case []any:
		return slices.Clone(v)
	default:
		return v
	}
}

// mutateValue changes one place in v (a JSON value) at random.
func (w *walker) mutateValue(v any) any {
	switch t := v.(type) {
	case map[string]any:
		keys := make([]string, 0, len(t))
		for k := range t {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		switch r := w.rng.IntN(10); {
		case r == 0 || len(keys) == 0:
			t["unknown_"+strconv.Itoa(w.rng.IntN(100))] = w.pick()
		case r == 1:
			delete(t, keys[w.rng.IntN(len(keys))])
		case r < 5:
			k := keys[w.rng.IntN(len(keys))]
			t[k] = w.mutateValue(t[k])
		default:
			t[keys[w.rng.IntN(len(keys))]] = w.pick()
		}
		return t
	case []any:
		if len(t) == 0 || w.rng.IntN(4) == 0 {
			return append(t, w.pick())
		}
		i := w.rng.IntN(len(t))
		t[i] = w.mutateValue(t[i])
		return t
	}
	return w.pick()
}

// mutateBytes damages an encoded body the way a broken client might.
func (w *walker) mutateBytes(b []byte) []byte {
	switch w.rng.IntN(8) {
	case 0:
		return b[:w.rng.IntN(len(b)+1)]
	case 1:
		i := w.rng.IntN(len(b) + 1)
		return append(b[:i:i], append([]byte{0xff, 0xfe}, b[i:]...)...)
	case 2:
		return bytes.Replace(b, []byte("{"), []byte(`{"a":1,"a":2,`), 1)
	case 3:
		return append(b, []byte(` {"trailing":true}`)...)
	case 4:
		return []byte(strings.Repeat("[", 1+w.rng.IntN(5000)))
	case 5:
		return []byte(`{"records":[` + strings.Repeat("1,", w.rng.IntN(3000)) + `1]}`)
	}
	return b
}

// request builds one mutated request for op.
func (w *walker) request(op walkOp) (*http.Request, error) {
	path := op.path
	q := url.Values{}
	for _, pr := range op.params {
		p := pr.Value
		var val string
		switch {
		case p.In == "path" && p.Name == "rule_set_id":
			val = "structural-style-gmaw"
		case p.In == "path":
			val = w.ids[pathKind(op.path)]
		case p.In == "query" && w.rng.IntN(3) == 0:
			val = fmt.Sprint(w.example(p.Schema.Value, p.Name, 0))
		default:
			continue
		}
		if w.rng.IntN(6) == 0 {
			val = fmt.Sprint(w.pick())
		}
		if p.In == "path" {
			path = strings.Replace(path, "{"+p.Name+"}", url.PathEscape(val), 1)
		} else {
			q.Set(p.Name, val)
		}
	}
	if w.rng.IntN(8) == 0 {
		q.Set([]string{"limit", "cursor", "revision", "unknown", "version", "include_voided"}[w.rng.IntN(6)], fmt.Sprint(w.pick()))
	}
	var body []byte
	if op.body != nil {
		var v any = w.example(op.body, "body", 0)
		if base := w.base(op); base != nil && w.rng.IntN(2) == 0 {
			v = base
		}
		for n := w.rng.IntN(4); n > 0; n-- {
			v = w.mutateValue(v)
		}
		body, _ = json.Marshal(v)
		if w.rng.IntN(5) == 0 {
			body = w.mutateBytes(body)
		}
	}
	u := w.e.url + path
	if len(q) > 0 {
		u += "?" + q.Encode()
	}
	req, err := http.NewRequest(op.method, u, bytes.NewReader(body))
	if err != nil {
		return nil, err
	}
	if body != nil && w.rng.IntN(12) != 0 {
		req.Header.Set("Content-Type", "application/json")
	}
	switch r := w.rng.IntN(20); {
	case r == 0: // no token
	case r == 1:
		req.Header.Set("Authorization", "Bearer not-a-token")
	case r == 2:
		req.Header.Set("Authorization", "Bearer "+w.e.tokens["auditor"])
	default:
		req.Header.Set("Authorization", "Bearer "+w.e.tokens[op.role])
	}
	if w.rng.IntN(10) == 0 {
		req.Header.Set("Idempotency-Key", []string{"k-" + strconv.Itoa(w.rng.IntN(5)), "", "bad key", strings.Repeat("k", 300)}[w.rng.IntN(4)])
	}
	return req, nil
}

// base is a valid body for the creating operations the fixtures cover, so
// that mutations also reach the writes behind validation.
func (w *walker) base(op walkOp) map[string]any {
	if op.method != http.MethodPost {
		return nil
	}
	switch op.path {
	case "/v1/procedures":
		return procedureBody(uniq("WPS"))
	case "/v1/qualification-records":
		return qualificationRecordBody(uniq("PQR"))
	case "/v1/coupons":
		return couponBody(w.ids["procedure_id"], "", uniq("C"))
	case "/v1/coupons/{id}/measurements":
		return measurementBody(uniq("S"))
	case "/v1/production-records":
		return map[string]any{"records": []any{productionRecordBody(w.ids["procedure_id"], uniq("J"))}}
	}
	return nil
}

// pathKind names the fixture a path's {id} refers to.
func pathKind(path string) string {
	for _, k := range []string{"procedures", "qualification-records", "coupons", "measurements", "calibrations"} {
		if strings.HasPrefix(path, "/v1/"+k+"/") {
			return k
		}
	}
	return "coupons"
}

// TestSpecWalk sends mutated requests to every operation of openapi.yaml on
// the real server and database: bodies built from each request schema and
// changed (fields dropped, added, replaced by hostile values, bytes broken),
// hostile path and query parameters, missing or wrong tokens and headers.
// No answer may be a 5xx. ETCHLOG_SPECWALK_REQUESTS sets the count (default
// 1500, the bounded pass CI runs; the long pass is 100000) and
// ETCHLOG_SPECWALK_SEED the seed.
func TestSpecWalk(t *testing.T) {
	e := newEnv(t)
	n := 1500
	if v, err := strconv.Atoi(os.Getenv("ETCHLOG_SPECWALK_REQUESTS")); err == nil && v > 0 {
		n = v
	}
	seed := uint64(rand.Int64())
	if v, err := strconv.ParseUint(os.Getenv("ETCHLOG_SPECWALK_SEED"), 10, 64); err == nil {
		seed = v
	}
	coupon := e.coupon()
	ids := map[string]string{
		"procedures": e.procedure(), "qualification-records": e.pqr(), "coupons": coupon,
		"measurements": e.mustMeasurement(coupon), "calibrations": uuid.NewString(),
		"procedure_id": e.procedure(), "qualification_record_id": e.pqr(), "coupon_id": coupon,
	}
	ops := specOps(t)
	var (
		mu       sync.Mutex
		statuses = map[int]int{}
		server   []string
		sent     int
	)
	jobs := make(chan int)
	var wg sync.WaitGroup
	for worker := 0; worker < 4; worker++ {
		wg.Add(1)
		go func(worker int) {
			defer wg.Done()
			w := &walker{e: e, rng: rand.New(rand.NewPCG(seed, uint64(worker))), ids: ids}
			client := &http.Client{}
			for i := range jobs {
				op := ops[i%len(ops)]
				req, err := w.request(op)
				if err != nil {
					continue // a path no client could send
				}
				res, err := client.Do(req)
				if err != nil {
					t.Errorf("%s %s: %v", req.Method, req.URL, err)
					continue
				}
				b, _ := io.ReadAll(res.Body)
				res.Body.Close()
				mu.Lock()
				sent++
				statuses[res.StatusCode]++
				if res.StatusCode >= 500 && len(server) < 20 {
					server = append(server, fmt.Sprintf("%s %s = %d %.300s", req.Method, req.URL.RequestURI(), res.StatusCode, b))
				}
				mu.Unlock()
			}
		}(worker)
	}
	for i := 0; i < n; i++ {
		jobs <- i
	}
	close(jobs)
	wg.Wait()
	fives := 0
	for s, c := range statuses {
		if s >= 500 {
			fives += c
		}
	}
	t.Logf("spec walk: %d requests over %d operations (seed %d): statuses %v; 5xx: %d", sent, len(ops), seed, statuses, fives)
	for _, s := range server {
		t.Errorf("server error: %s", s)
	}
}
