package api_test

import (
	"bytes"
	"context"
	"net/http"
	"slices"
	"strings"
	"testing"

	"github.com/getkin/kin-openapi/openapi3"

	"etchlog/openapi"
)

// loadSpec parses and validates the embedded OpenAPI document.
func loadSpec(tb testing.TB) *openapi3.T {
	tb.Helper()
	spec, err := openapi3.NewLoader().LoadFromData(openapi.Spec)
	if err != nil {
		tb.Fatalf("load openapi/openapi.yaml: %v", err)
	}
	if err := spec.Validate(context.Background()); err != nil {
		tb.Fatalf("openapi/openapi.yaml is not valid OpenAPI 3: %v", err)
	}
	return spec
}

// TestRoutesMatchSpec fails when a registered route has no operation in
// openapi/openapi.yaml or an operation has no route.
func TestRoutesMatchSpec(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	spec := loadSpec(t)
	var ops []string
	for path, item := range spec.Paths.Map() {
		for method := range item.Operations() {
			ops = append(ops, strings.ToUpper(method)+" "+path)
		}
	}
	routes := e.srv.Routes()
	slices.Sort(ops)
	slices.Sort(routes)
	for _, r := range routes {
		if !slices.Contains(ops, r) {
			t.Errorf("route %s has no operation in openapi/openapi.yaml", r)
		}
	}
	for _, op := range ops {
		if !slices.Contains(routes, op) {
			t.Errorf("operation %s in openapi/openapi.yaml has no route", op)
		}
	}
	if len(slices.Compact(slices.Clone(routes))) != len(routes) {
		t.Errorf("a route is registered twice: %v", routes)
	}
}

// TestSpecOperations checks every operation is usable by a client: an
// operationId of its own, and a bearer requirement on exactly the /v1 routes.
func TestSpecOperations(t *testing.T) {
	t.Parallel()
	spec := loadSpec(t)
	seen := map[string]string{}
	for path, item := range spec.Paths.Map() {
		for method, op := range item.Operations() {
			where := strings.ToUpper(method) + " " + path
			if op.OperationID == "" {
				t.Errorf("%s has no operationId", where)
			} else if other, ok := seen[op.OperationID]; ok {
				t.Errorf("%s and %s share operationId %s", where, other, op.OperationID)
			}
			seen[op.OperationID] = where
			secured := op.Security != nil && len(*op.Security) > 0
			if v1 := strings.HasPrefix(path, "/v1/"); secured != v1 {
				t.Errorf("%s: bearer security = %v, want %v (every /v1 route needs a token)", where, secured, v1)
			}
			if op.Security == nil {
				t.Errorf("%s: no security, want security: [] on a public operation (it says so rather than inherit)", where)
			}
		}
	}
}

// TestSpecServed checks /openapi.yaml serves the embedded document unchanged.
func TestSpecServed(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	r := e.do(http.MethodGet, "/openapi.yaml", "", nil)
	if r.status != http.StatusOK || !bytes.Equal(r.body, openapi.Spec) {
		t.Errorf("GET /openapi.yaml = %d with %d bytes, want 200 with the %d bytes of openapi/openapi.yaml", r.status, len(r.body), len(openapi.Spec))
	}
	if ct := r.header.Get("Content-Type"); !strings.HasPrefix(ct, "application/yaml") {
		t.Errorf("GET /openapi.yaml Content-Type = %q, want application/yaml", ct)
	}
}

// responseSchemas calls visit for every schema reachable from the JSON
// answers of each operation (once per operation), with where it sits.
func responseSchemas(spec *openapi3.T, visit func(op *openapi3.Operation, where string, s *openapi3.Schema)) {
	responseSchemasOf(spec, "", visit)
}

// responseSchemasOf is responseSchemas for the answers whose status starts
// with prefix ("2" for successes, "" for all).
func responseSchemasOf(spec *openapi3.T, prefix string, visit func(op *openapi3.Operation, where string, s *openapi3.Schema)) {
	var seen map[*openapi3.Schema]bool
	var walk func(op *openapi3.Operation, where string, ref *openapi3.SchemaRef)
	walk = func(op *openapi3.Operation, where string, ref *openapi3.SchemaRef) {
		if ref == nil || ref.Value == nil || seen[ref.Value] {
			return
		}
		if ref.Ref != "" {
			where = ref.Ref
		}
		s := ref.Value
		seen[s] = true
		visit(op, where, s)
		for name, p := range s.Properties {
			walk(op, where+"."+name, p)
		}
		walk(op, where+"[]", s.Items)
		walk(op, where+"{}", s.AdditionalProperties.Schema)
		for _, sub := range append(append(append(openapi3.SchemaRefs{}, s.AllOf...), s.AnyOf...), s.OneOf...) {
			walk(op, where+"|", sub)
		}
	}
	for path, item := range spec.Paths.Map() {
		for method, op := range item.Operations() {
			seen = map[*openapi3.Schema]bool{}
			for code, res := range op.Responses.Map() {
				if !strings.HasPrefix(code, prefix) {
					continue
				}
				for ct, mt := range res.Value.Content {
					if strings.HasSuffix(ct, "json") {
						walk(op, strings.ToUpper(method)+" "+path+" "+code, mt.Schema)
					}
				}
			}
		}
	}
}

// TestSpecAnswersTyped checks that every object an answer can hold lists
// its properties: a client can rely on each name, and the answer check in
// every test refuses a property the document does not list. The audit
// payload is the one open object (the stored row, column by column).
func TestSpecAnswersTyped(t *testing.T) {
	t.Parallel()
	responseSchemas(loadSpec(t), func(_ *openapi3.Operation, where string, s *openapi3.Schema) {
		constraint := s.Type == nil && len(s.Properties) == 0 && s.Items == nil // e.g. {required: [...]} in an anyOf
		if constraint || len(s.Properties) > 0 || s.AdditionalProperties.Schema != nil || !s.Type.Is("object") {
			return
		}
		t.Errorf("%s is an object without properties", where)
	})
}

// TestSpecInchPoundTwins checks that an answer of an operation taking the
// units parameter lists, beside each metric quantity, the inch-pound name
// units=inch-pound answers it under (thickness_mm → thickness_in, preheat_c
// → preheat_f, travel_speed_mm_s → travel_speed_in_min...). Problems are
// not converted.
func TestSpecInchPoundTwins(t *testing.T) {
	t.Parallel()
	spec := loadSpec(t)
	takesUnits := map[*openapi3.Operation]bool{}
	for _, item := range spec.Paths.Map() {
		for _, op := range item.Operations() {
			takesUnits[op] = op.Parameters.GetByInAndName("query", "units") != nil
		}
	}
	// Problems name fields as the request sent them and stay metric.
	responseSchemasOf(spec, "2", func(op *openapi3.Operation, where string, s *openapi3.Schema) {
		if !takesUnits[op] {
			return
		}
		for name := range s.Properties {
			if twin, _, ok := inchTwin(name); ok && s.Properties[twin] == nil {
				t.Errorf("%s.%s has no inch-pound twin %s", where, name, twin)
			}
		}
	})
}
