package api

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"net/http"
	"sort"
	"strconv"
	"strings"
	"testing"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/getkin/kin-openapi/openapi3filter"
	"github.com/getkin/kin-openapi/routers"
	"github.com/google/uuid"
)

// quickRoute is one operation whose request body compiled, with what the
// reference check (kin-openapi's ValidateRequestBody, as conformTo runs it)
// needs.
type quickRoute struct {
	name  string
	quick *quickBody
	route *routers.Route
	body  *openapi3.RequestBody
}

func quickRoutes(t testing.TB) []quickRoute {
	spec, err := loadSpec()
	if err != nil {
		t.Fatal(err)
	}
	var out []quickRoute
	for path, item := range spec.Paths.Map() {
		for method, op := range item.Operations() {
			q := compileQuick(op)
			if q == nil {
				continue
			}
			out = append(out, quickRoute{name: method + " " + path, quick: q,
				route: &routers.Route{Spec: spec, Path: path, PathItem: item, Method: method, Operation: op},
				body:  op.RequestBody.Value})
		}
	}
	sort.Slice(out, func(i, j int) bool { return out[i].name < out[j].name })
	return out
}

// openAPIAccepts is the reference: kin-openapi's body check with the
// options conformTo gives it.
func (r quickRoute) openAPIAccepts(contentType string, body []byte) bool {
	req, _ := http.NewRequest(r.route.Method, "http://x"+r.route.Path, bytes.NewReader(body))
	if contentType != "" {
		req.Header.Set("Content-Type", contentType)
	}
	in := &openapi3filter.RequestValidationInput{Request: req, Route: r.route,
		Options: &openapi3filter.Options{AuthenticationFunc: openapi3filter.NoopAuthenticationFunc, ExcludeResponseBody: true}}
	return openapi3filter.ValidateRequestBody(context.Background(), in, r.body) == nil
}

// TestQuickBodyCompiles names the operations whose bodies the compiled check
// takes; the coupon and section writes must be among them.
func TestQuickBodyCompiles(t *testing.T) {
	var names []string
	for _, r := range quickRoutes(t) {
		names = append(names, r.name)
	}
	t.Logf("%d operations with a compiled body: %s", len(names), strings.Join(names, ", "))
	for _, want := range []string{"POST /v1/coupons", "PUT /v1/coupons/{id}", "POST /v1/coupons/{id}/measurements"} {
		if !strings.Contains(","+strings.Join(names, ",")+",", ","+want+",") {
			t.Errorf("%s: body not compiled", want)
		}
	}
}

// TestQuickBodyAgreesWithOpenAPICheck holds the compiled check to the
// reference library: over generated bodies of every compiled operation
// (valid ones, then each with faults at the edges of its keywords: bounds,
// lengths counted in characters, formats, enums, types, nulls, unknown,
// missing and repeated fields, escapes, other media types), every body it
// accepts the OpenAPI check accepts, and it accepts every valid body written
// without escapes.
func TestQuickBodyAgreesWithOpenAPICheck(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	for _, r := range quickRoutes(t) {
		var valid, faulty, quickYes, refYes int
		for range 600 {
			b := genBody(rng, r.quick)
			raw := b.encode()
			ct := "application/json"
			if !r.quick.accepts(ct, raw) {
				t.Errorf("%s: a valid body is not taken quickly: %s", r.name, raw)
			}
			if !r.openAPIAccepts(ct, raw) {
				t.Fatalf("%s: generated valid body refused by the OpenAPI check: %s", r.name, raw)
			}
			valid++
			for range 6 {
				ct, raw := mutate(rng, r.quick, b)
				q, ref := r.quick.accepts(ct, raw), r.openAPIAccepts(ct, raw)
				faulty++
				if q {
					quickYes++
				}
				if ref {
					refYes++
				}
				if q && !ref {
					t.Errorf("%s: accepted quickly, refused by the OpenAPI check (%q): %s", r.name, ct, raw)
				}
			}
		}
		t.Logf("%s: %d valid bodies; %d altered: quick check took %d, OpenAPI check %d",
			r.name, valid, faulty, quickYes, refYes)
	}
}

// FuzzQuickBody: whatever the bytes, a body the compiled check of the coupon
// create accepts is one the OpenAPI check accepts.
func FuzzQuickBody(f *testing.F) {
	var coupon quickRoute
	for _, r := range quickRoutes(f) {
		if r.name == "POST /v1/coupons" {
			coupon = r
		}
	}
	if coupon.quick == nil {
		f.Fatal("POST /v1/coupons has no compiled body")
	}
	rng := rand.New(rand.NewPCG(3, 5))
	for range 20 {
		b := genBody(rng, coupon.quick)
		f.Add(b.encode())
		_, raw := mutate(rng, coupon.quick, b)
		f.Add(raw)
	}
	f.Fuzz(func(t *testing.T, body []byte) {
		if coupon.quick.accepts("application/json", body) && !coupon.openAPIAccepts("application/json", body) {
			t.Fatalf("accepted quickly, refused by the OpenAPI check: %q", body)
		}
	})
}

// genField is one field of a generated body, its value as JSON text.
type genField struct{ name, value string }

type genBodyFields []genField

func (b genBodyFields) encode() []byte {
	var sb strings.Builder
	sb.WriteString("{")
	for i, f := range b {
		if i > 0 {
			sb.WriteString(",")
		}
		sb.WriteString(strconv.Quote(f.name) + ":" + f.value)
	}
	sb.WriteString("}")
	return []byte(sb.String())
}

func fieldNames(q *quickBody) []string {
	names := make([]string, len(q.fields))
	for n, i := range q.index {
		names[i] = n
	}
	return names
}

// genBody writes a valid body: the required fields, one spelling of each
// group, and about half of the rest, each a valid value.
func genBody(rng *rand.Rand, q *quickBody) genBodyFields {
	names := fieldNames(q)
	want := q.required
	for _, g := range q.anyOf {
		want |= g[rng.IntN(len(g))]
	}
	var out genBodyFields
	for i, n := range names {
		if want&(1<<i) != 0 || rng.IntN(2) == 0 {
			out = append(out, genField{n, validValue(rng, &q.fields[i])})
		}
	}
	rng.Shuffle(len(out), func(i, j int) { out[i], out[j] = out[j], out[i] })
	return out
}

func jsonText(v any) string {
	b, err := json.Marshal(v)
	if err != nil {
		panic(err)
	}
	return string(b)
}

// letters mixes one-byte, two-byte, three-byte and four-byte characters
// (a four-byte one is one character to the length keywords).
var letters = []rune("aZ09-_ éß中😀")

func validValue(rng *rand.Rand, f *quickField) string {
	s := f.schema
	switch f.kind {
	case quickString:
		if len(f.enum) > 0 {
			return jsonText(f.enum[rng.IntN(len(f.enum))])
		}
		switch s.Format {
		case "uuid":
			return jsonText(uuid.NewString())
		case "date":
			return jsonText(fmt.Sprintf("%04d-%02d-%02d", 1950+rng.IntN(70), 1+rng.IntN(12), 1+rng.IntN(28)))
		case "date-time":
			return jsonText(fmt.Sprintf("2026-%02d-%02dT%02d:%02d:%02dZ", 1+rng.IntN(12), 1+rng.IntN(28), rng.IntN(24), rng.IntN(60), rng.IntN(60)))
		}
		lo, hi := int(s.MinLength), 12
		if s.MaxLength != nil && int(*s.MaxLength) < hi {
			hi = int(*s.MaxLength)
		}
		n := lo + rng.IntN(hi-lo+1)
		r := make([]rune, n)
		for i := range r {
			r[i] = letters[rng.IntN(len(letters))]
		}
		return jsonText(string(r))
	case quickNumber, quickInteger:
		lo, hi := -1000.0, 1000.0
		if s.Min != nil {
			lo = *s.Min
		}
		if s.Max != nil {
			hi = *s.Max
		}
		v := lo + rng.Float64()*(hi-lo)
		if f.kind == quickInteger {
			v = math.Ceil(v)
			if v > hi {
				v = math.Floor(hi)
			}
		}
		if (s.ExclusiveMin.IsSet() && v == lo) || (s.ExclusiveMax.IsSet() && v == hi) {
			v = (lo + hi) / 2
		}
		return strconv.FormatFloat(v, 'g', -1, 64)
	case quickBool:
		return []string{"true", "false"}[rng.IntN(2)]
	case quickList:
		var items []string
		for range rng.IntN(4) {
			items = append(items, validValue(rng, f.item))
		}
		return "[" + strings.Join(items, ",") + "]"
	}
	panic("unknown kind")
}

// edgeValues are values at and past the edges of f's keywords, and of
// other types.
func edgeValues(rng *rand.Rand, f *quickField) []string {
	s := f.schema
	out := []string{"null", "{}", "[]", "true", `"x"`, "0", "-0", "1.5", "1e2", "1e400", "-1e400", `"1"`, `"a\u00e9"`, `"\"q\""`}
	switch f.kind {
	case quickString:
		for _, e := range f.enum {
			out = append(out, jsonText(strings.ToUpper(e)), jsonText(e+" "), jsonText(e))
		}
		if s.MaxLength != nil {
			for _, n := range []int{int(*s.MaxLength), int(*s.MaxLength) + 1} {
				for _, c := range []string{"a", "é", "中", "😀"} {
					out = append(out, jsonText(strings.Repeat(c, n)))
				}
			}
		}
		out = append(out, `""`, `" "`, jsonText(strings.Repeat("a", int(s.MinLength))))
		switch s.Format {
		case "uuid":
			id := uuid.NewString()
			out = append(out, jsonText(strings.ToUpper(id)), jsonText(strings.ReplaceAll(id, "-", "")), jsonText("{"+id+"}"),
				jsonText("urn:uuid:"+id), jsonText(id[:35]), jsonText(id+"0"), `"00000000-0000-0000-0000-00000000000g"`)
		case "date":
			out = append(out, `"2026-02-30"`, `"2026-13-01"`, `"2026-00-10"`, `"2026-1-01"`, `"26-01-01"`, `"2026-01-01T00:00:00Z"`, `"0000-01-01"`, `"2024-02-29"`, `"2023-02-29"`)
		case "date-time":
			out = append(out, `"2026-01-01T24:00:00Z"`, `"2026-01-01T00:00:60Z"`, `"2026-01-01 00:00:00Z"`, `"2026-01-01T00:00:00+01:00"`, `"2026-01-01T00:00:00"`)
		}
	case quickNumber, quickInteger:
		for _, p := range []*float64{s.Min, s.Max} {
			if p != nil {
				v := *p
				for _, w := range []float64{v, math.Nextafter(v, math.Inf(1)), math.Nextafter(v, math.Inf(-1)), v - 1, v + 1, v + 0.5} {
					out = append(out, strconv.FormatFloat(w, 'g', -1, 64))
				}
				out = append(out, strconv.FormatFloat(v, 'e', -1, 64), strconv.FormatFloat(v, 'f', 3, 64))
			}
		}
		out = append(out, "2147483648", "9007199254740993", "1e308", "-1e308", "5e-324", "1.0")
	case quickList:
		out = append(out, "[null]", "[1]", `["x"]`, "[[]]", validValue(rng, f), "["+validValue(rng, f.item)+","+edgeValues(rng, f.item)[rng.IntN(20)]+"]")
	}
	return out
}

// mutate alters a valid body: a field's value at an edge, a field dropped,
// an unknown or repeated field, bytes around the object, or the media type.
func mutate(rng *rand.Rand, q *quickBody, b genBodyFields) (string, []byte) {
	out := append(genBodyFields(nil), b...)
	ct := "application/json"
	names := fieldNames(q)
	for range 1 + rng.IntN(3) {
		switch k := rng.IntN(10); {
		case k < 5: // a value at an edge, in a field sent or not
			i := rng.IntN(len(names))
			vals := edgeValues(rng, &q.fields[i])
			v := vals[rng.IntN(len(vals))]
			set := false
			for j := range out {
				if out[j].name == names[i] {
					out[j].value, set = v, true
				}
			}
			if !set {
				out = append(out, genField{names[i], v})
			}
		case k == 5 && len(out) > 0:
			j := rng.IntN(len(out))
			out = append(out[:j], out[j+1:]...)
		case k == 6:
			out = append(out, genField{[]string{"unknown", "Coupon_mark", "coupon_mark ", ""}[rng.IntN(4)], "1"})
		case k == 7 && len(out) > 0:
			out = append(out, out[rng.IntN(len(out))])
		case k == 8:
			ct = []string{"application/json; charset=utf-8", "Application/JSON", "text/plain", "application/merge-patch+json", "", "application/jsonx"}[rng.IntN(6)]
		default:
			raw := out.encode()
			wrap := []string{" %s ", "%s,", "[%s]", "%s{}", "%s x", "\n%s\n"}[rng.IntN(6)]
			return ct, []byte(fmt.Sprintf(wrap, raw))
		}
	}
	return ct, out.encode()
}
