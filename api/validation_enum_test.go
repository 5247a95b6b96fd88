package api_test

import (
	"fmt"
	"net/http"
	"strings"
	"testing"
)

// TestEnum sends every value the OpenAPI document allows for every enumerated
// field of every input schema (each must be stored: the document, the
// validate tags and the database CHECKs agree), then values it does not allow
// (refused, naming the field).
func TestEnum(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	spec := loadSpec(t)
	for _, k := range inputKinds() {
		n := 0
		for name, prop := range spec.Components.Schemas[k.schema].Value.Properties {
			if len(prop.Value.Enum) == 0 {
				continue
			}
			n++
			for _, v := range prop.Value.Enum {
				t.Run(fmt.Sprintf("%s/%s=%v", k.name, name, v), func(t *testing.T) {
					b := k.body(e)
					b[name] = v
					r := e.do(http.MethodPost, k.path(e), k.role, b)
					if r.status != http.StatusCreated {
						t.Fatalf("%s = %q: status = %d %s, want 201", name, v, r.status, r.body)
					}
					if got := r.object(t)[name]; got != v {
						t.Errorf("%s = %q stored as %v", name, v, got)
					}
				})
			}
			first := fmt.Sprint(prop.Value.Enum[0])
			for _, bad := range []string{"bogus", strings.ToLower(first) + "x", strings.ToUpper(first) + " "} {
				t.Run(fmt.Sprintf("%s/%s=%q", k.name, name, bad), func(t *testing.T) {
					b := k.body(e)
					b[name] = bad
					r := e.do(http.MethodPost, k.path(e), k.role, b)
					if r.status != http.StatusBadRequest && r.status != http.StatusUnprocessableEntity {
						t.Errorf("%s = %q: status = %d, want 400 or 422", name, bad, r.status)
					}
					wantProblem(t, name+" = "+bad, r, r.status, name)
				})
			}
		}
		if n == 0 {
			t.Errorf("%s: no enumerated fields found", k.schema)
		}
	}
}
