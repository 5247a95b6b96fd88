package api_test

import (
	"net/http"
	"slices"
	"strings"
	"testing"
)

// TestMissingField leaves out each field of each input schema in turn: a
// required one is a 400 naming it, an optional one is accepted.
func TestMissingField(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	spec := loadSpec(t)
	for _, k := range inputKinds() {
		schema := spec.Components.Schemas[k.schema].Value
		required := append(slices.Clone(schema.Required), k.required...)
		full := k.body(e)
		for field := range full {
			t.Run(k.name+"/"+field, func(t *testing.T) {
				b := k.body(e)
				delete(b, field)
				r := e.do(http.MethodPost, k.path(e), k.role, b)
				if slices.Contains(required, field) {
					wantProblem(t, "without "+field, r, http.StatusBadRequest, field)
				} else if r.status != http.StatusCreated {
					t.Errorf("without optional %s: status = %d %s, want 201", field, r.status, r.body)
				}
			})
		}
		// Every property of the schema is covered: sent by the fixture, an
		// alternative spelling (TestUnitsIn), a correction field or a
		// server-owned one (TestConventionRoundTrip).
		for name := range schema.Properties {
			_, sent := full[name]
			if !sent && !isSpelling(k.name, name) && name != "base_revision" && name != "reason" && !ownedFields[name] {
				t.Errorf("%s property %s is not covered by the fixture or the spelling table", k.schema, name)
			}
		}
	}
	t.Run("Coupon/procedure_id+qualification_record_id", func(t *testing.T) {
		b := couponBody(e.procedure(), "", uniq("C"))
		delete(b, "procedure_id")
		r := e.do(http.MethodPost, "/v1/coupons", "technician", b)
		p := wantProblem(t, "coupon without a procedure or record", r, http.StatusBadRequest, "procedure_id")
		if len(p.Errors) == 1 && !strings.Contains(p.Errors[0].Reason, "qualification_record_id") {
			t.Errorf("reason %q does not name qualification_record_id", p.Errors[0].Reason)
		}
	})
}

// isSpelling reports whether field is an alternative spelling of a quantity of kind.
func isSpelling(kind, field string) bool {
	for _, c := range spellingCases {
		if c.kind == kind && c.field == field {
			return true
		}
	}
	return false
}

// TestWrongType sends every property of every input schema with a value of
// the wrong JSON type: 400 naming the property.
func TestWrongType(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	spec := loadSpec(t)
	for _, k := range inputKinds() {
		for name, prop := range spec.Components.Schemas[k.schema].Value.Properties {
			var wrong any = "12"
			switch {
			case prop.Value.Type.Is("string"):
				wrong = 12
			case prop.Value.Type.Is("array"):
				wrong = "1G"
			}
			t.Run(k.name+"/"+name, func(t *testing.T) {
				b := k.body(e)
				b[name] = wrong
				r := e.do(http.MethodPost, k.path(e), k.role, b)
				wantProblem(t, name+" as "+strings.TrimSpace(string(normalizeJSON(wrong))), r, http.StatusBadRequest, name)
			})
		}
	}
}

// TestBadValue sends malformed record ids, dates and list items: 400 naming the field.
func TestBadValue(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, c := range []struct {
		kind, field string
		value       any
		named       string
	}{
		{"Coupon", "procedure_id", "WPS-101", "procedure_id"},
		{"Coupon", "procedure_id", "01a23493-441b-786a-a689", "procedure_id"},
		{"Coupon", "qualification_record_id", "not-a-uuid", "qualification_record_id"},
		{"Procedure", "supporting_record_ids", []any{"PQR-1"}, "supporting_record_ids.0"},
		{"Procedure", "positions", []any{1}, "positions.0"},
		{"Coupon", "welded_on", "2026-02-30", "welded_on"},
		{"Coupon", "welded_on", "2026-13-01", "welded_on"},
		{"Coupon", "welded_on", "03/11/2026", "welded_on"},
		{"Coupon", "welded_on", "2026-11-03T08:00:00Z", "welded_on"},
		{"QualificationRecord", "welded_on", "2026-11-31", "welded_on"},
		{"QualificationRecord", "welded_on", "", "welded_on"},
		{"Coupon", "pass_number", 1.5, "pass_number"},
	} {
		t.Run(c.kind+"/"+c.field+"="+string(normalizeJSON(c.value)), func(t *testing.T) {
			k := kindNamed(c.kind)
			b := k.body(e)
			b[c.field] = c.value
			r := e.do(http.MethodPost, k.path(e), k.role, b)
			wantProblem(t, c.field, r, http.StatusBadRequest, c.named)
		})
	}
}

// TestUnknownField adds a field no schema has, to every write: 400 naming it.
func TestUnknownField(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, k := range inputKinds() {
		for _, extra := range []string{"bogus_field", "current_amps", "travel_speed_ipm"} {
			t.Run(k.name+"/Create/"+extra, func(t *testing.T) {
				b := k.body(e)
				b[extra] = 1
				wantProblem(t, "create with "+extra, e.do(http.MethodPost, k.path(e), k.role, b), http.StatusBadRequest, extra)
			})
		}
		t.Run(k.name+"/Correct", func(t *testing.T) {
			rec := e.create(k.path(e), k.role, k.body(e))
			b := withRevision(k.body(e), 1, "typo")
			b["note"] = "x"
			r := e.do(http.MethodPut, k.read+"/"+rec["id"].(string), k.role, b)
			wantProblem(t, "correction with note", r, http.StatusBadRequest, "note")
		})
		t.Run(k.name+"/Void", func(t *testing.T) {
			rec := e.create(k.path(e), k.role, k.body(e))
			r := e.do(http.MethodPost, k.read+"/"+rec["id"].(string)+"/void", k.role,
				map[string]any{"base_revision": 1, "reason": "cut from the wrong plate", "note": "x"})
			wantProblem(t, "void with note", r, http.StatusBadRequest, "note")
		})
	}
}

// kindNamed returns the input kind of that name.
func kindNamed(name string) inputKind {
	for _, k := range inputKinds() {
		if k.name == name {
			return k
		}
	}
	panic("no input kind " + name)
}
