package api

import (
	"reflect"
	"strings"
	"testing"

	"etchlog/db"
	"etchlog/predict"
)

// validatedTypes are the types the API validates with s.check.
var validatedTypes = []any{
	db.ProcedureData{}, db.QualificationRecordData{}, db.CouponData{}, db.MeasurementData{},
	db.ProductionRecordData{}, db.CalibrationSpec{}, db.RuleSetData{},
	prediction{}, window{}, hold{}, penetrationInverse{}, depositionInverse{}, groupFields{},
}

// TestTaggedFieldsRegistered checks that every field validated by "quantity"
// or "enum" has its JSON name in the quantity registry, and that no numeric
// bound is written in a validate tag beside the registry.
func TestTaggedFieldsRegistered(t *testing.T) {
	for _, v := range validatedTypes {
		typ := reflect.TypeOf(v)
		for i := range typ.NumField() {
			f := typ.Field(i)
			name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
			for _, rule := range strings.Split(f.Tag.Get("validate"), ",") {
				tag, param, _ := strings.Cut(rule, "=")
				switch tag {
				case "quantity":
					if _, ok := predict.LookupQuantity(name); !ok {
						t.Errorf("%s.%s (%s): tagged quantity, not registered", typ.Name(), f.Name, name)
					}
				case "enum":
					if _, ok := predict.LookupEnum(name); !ok {
						t.Errorf("%s.%s (%s): tagged enum, not registered", typ.Name(), f.Name, name)
					}
				case "gt", "gte", "lt", "lte":
					if _, ok := predict.LookupQuantity(name); ok {
						t.Errorf("%s.%s (%s): bound %s=%s written in the tag; the registry holds it", typ.Name(), f.Name, name, tag, param)
					}
				}
			}
		}
	}
}
