package api

import (
	"context"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strings"
	"testing"

	"github.com/getkin/kin-openapi/openapi3"

	"etchlog/db"
	"etchlog/openapi"
	"etchlog/predict"
)

// storedSchemas are the response schemas of stored records: their numbers
// are always inside the registered bounds, so the document states them.
// (Model answers may lie outside: an inverse solve reports such a value.)
var storedSchemas = []string{"Procedure", "QualificationRecord", "Coupon", "Measurement", "ProductionRecord",
	"Calibration", "CalibrationActivation"}

// schemaTypes maps each request schema to the Go type its body is validated as.
var schemaTypes = map[string]any{
	"ProcedureIn": db.ProcedureData{}, "QualificationRecordIn": db.QualificationRecordData{},
	"CouponIn": db.CouponData{}, "MeasurementIn": db.MeasurementData{}, "ProductionRecordIn": db.ProductionRecordData{},
	"CalibrationIn": db.CalibrationSpec{}, "PredictionIn": prediction{}, "HoldPenetrationIn": hold{},
	"PenetrationInverseIn": penetrationInverse{}, "DepositionInverseIn": depositionInverse{}, "WindowIn": window{},
}

// rawSpec loads the document as written (loadSpec drops the registered
// bounds from the copy requests are checked against).
func rawSpec(t *testing.T) *openapi3.T {
	t.Helper()
	spec, err := openapi3.NewLoader().LoadFromData(openapi.Spec)
	if err != nil {
		t.Fatal(err)
	}
	if err := spec.Validate(context.Background()); err != nil {
		t.Fatal(err)
	}
	return spec
}

// requestSchemas names every component schema a request body uses, directly or nested.
func requestSchemas(spec *openapi3.T) map[string]bool {
	out := map[string]bool{}
	var walk func(ref *openapi3.SchemaRef)
	walk = func(ref *openapi3.SchemaRef) {
		if ref == nil {
			return
		}
		if name, ok := strings.CutPrefix(ref.Ref, "#/components/schemas/"); ok {
			if out[name] {
				return
			}
			out[name] = true
		}
		if ref.Value == nil {
			return
		}
		for _, p := range ref.Value.Properties {
			walk(p)
		}
		walk(ref.Value.Items)
		for _, group := range [][]*openapi3.SchemaRef{ref.Value.AllOf, ref.Value.AnyOf, ref.Value.OneOf} {
			for _, s := range group {
				walk(s)
			}
		}
	}
	for _, item := range spec.Paths.Map() {
		for _, op := range item.Operations() {
			if op.RequestBody != nil && op.RequestBody.Value != nil {
				if mt := op.RequestBody.Value.Content.Get("application/json"); mt != nil {
					walk(mt.Schema)
				}
			}
		}
	}
	return out
}

// TestSpecMatchesRegistry compares every property of openapi.yaml named like
// a registered quantity or enumerated word with the registry: its type; in
// request and stored-record schemas its minimum and maximum (on the stored
// spelling; another spelling carries none, since bounds apply in the stored
// unit after the exact conversion); every enum's values; and, for request
// schemas, whether a quantity written one way is required exactly when its
// Go type requires it.
func TestSpecMatchesRegistry(t *testing.T) {
	spec := rawSpec(t)
	bounded := requestSchemas(spec)
	for _, n := range storedSchemas {
		bounded[n] = true
	}
	compared := 0
	for sname, ref := range spec.Components.Schemas {
		s := ref.Value
		eachProperty(s, func(pname string, p *openapi3.SchemaRef) {
			where := sname + "." + pname
			if e, ok := predict.LookupEnum(pname); ok && len(p.Value.Enum) > 0 {
				compared++
				want := slices.Clone(e.Values)
				if e.Blank {
					want = append([]string{""}, want...)
				}
				var got []string
				for _, v := range p.Value.Enum {
					got = append(got, fmt.Sprint(v))
				}
				if !slices.Equal(sorted(got), sorted(want)) {
					t.Errorf("%s: enum %q, registry %q", where, got, want)
				}
			}
			q, ok := predict.LookupQuantity(pname)
			if !ok || p.Ref != "" { // a $ref (a window's Range) has its bounds checked by checkRanges
				return
			}
			compared++
			if p.Value.Type.Is("object") {
				return // a range in the quantity's unit, e.g. a window's answer
			}
			wantType := "number"
			if q.Integer {
				wantType = "integer"
			}
			if !p.Value.Type.Is(wantType) {
				t.Errorf("%s: type %v, registry says %s", where, p.Value.Type, wantType)
			}
			if !bounded[sname] {
				return
			}
			if pname != q.Name {
				if p.Value.Min != nil || p.Value.Max != nil {
					t.Errorf("%s: bounds on a converted spelling; state them on %s only", where, q.Name)
				}
				return
			}
			checkBound(t, where+" minimum", p.Value.Min, p.Value.ExclusiveMin.IsTrue(), q.Min, q.MinOpen)
			checkBound(t, where+" maximum", p.Value.Max, p.Value.ExclusiveMax.IsTrue(), q.Max, q.MaxOpen)
		})
		if typ, ok := schemaTypes[sname]; ok {
			checkRequired(t, sname, s, typ)
		}
	}
	t.Logf("compared %d properties with the registry", compared)
	if compared < 150 {
		t.Errorf("compared only %d properties with the registry; want every registered one (about 250)", compared)
	}
}

func checkBound(t *testing.T, where string, got *float64, gotOpen bool, want float64, wantOpen bool) {
	t.Helper()
	switch {
	case math.IsInf(want, 0) && got == nil:
	case got == nil:
		t.Errorf("%s: missing, registry %v", where, want)
	case *got != want || gotOpen != wantOpen:
		t.Errorf("%s: %v (exclusive %v), registry %v (exclusive %v)", where, *got, gotOpen, want, wantOpen)
	}
}

// requiredExceptions are fields whose Go type requires a value that the
// request may leave out, with the reason.
var requiredExceptions = map[string]string{
	"HoldPenetrationIn.new_voltage_v": "left out, it is the present voltage_v (only the travel speed changes)",
	// A row's number left out reads as 0 and is refused with 422 naming
	// records[i].field (TestProductionBatch); marking it required would answer 400 without the row.
	"ProductionRecordIn.current_a": "refused per row, see above",
	"ProductionRecordIn.voltage_v": "refused per row, see above",
}

// checkRequired compares a request schema's required list with the Go type:
// a quantity the schema offers in one spelling is required in both or in
// neither; one offered in several spellings cannot be required by name.
func checkRequired(t *testing.T, sname string, s *openapi3.Schema, typ any) {
	t.Helper()
	rt := reflect.TypeOf(typ)
	for i := range rt.NumField() {
		f := rt.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		q, ok := predict.LookupQuantity(name)
		if !ok || s.Properties[name] == nil {
			continue
		}
		spellings := 0
		for _, sp := range q.Spellings() {
			if s.Properties[sp] != nil {
				spellings++
			}
		}
		goRequired := slices.Contains(strings.Split(f.Tag.Get("validate"), ","), "required")
		specRequired := slices.Contains(s.Required, name)
		switch {
		case spellings > 1 && specRequired:
			t.Errorf("%s.%s: required by name, but %d spellings are accepted", sname, name, spellings)
		case spellings == 1 && goRequired != specRequired && requiredExceptions[sname+"."+name] == "":
			t.Errorf("%s.%s: required in the document %v, by %s %v", sname, name, specRequired, rt.Name(), goRequired)
		}
	}
}

func sorted(s []string) []string {
	s = slices.Clone(s)
	slices.Sort(s)
	return s
}
