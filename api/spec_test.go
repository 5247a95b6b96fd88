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
