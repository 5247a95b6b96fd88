package api_test

import (
	"context"
	"math"
	"reflect"
	"strconv"

	"github.com/google/uuid"

	"etchlog/db"
)

// answered is v as an answer carries it: the API writes every number
// rounded to 12 significant digits (api/jsonout.go), while the database
// keeps full precision. Expected values are compared exactly after this.
func answered(v float64) float64 {
	r, err := strconv.ParseFloat(strconv.FormatFloat(v, 'g', 12, 64), 64)
	if err != nil {
		panic(err)
	}
	return r
}

// to12Digits reports whether an answered number is want carried to 12
// significant digits: within half a unit of the 12th digit.
func to12Digits(got, want float64) bool { return math.Abs(got-want) <= 5e-12*math.Abs(want) }

// answeredAll rounds every float64 reachable from ptr (structs, pointers,
// slices, arrays) as answered does, so a whole expected value can be
// compared with an answer.
func answeredAll(ptr any) {
	var walk func(v reflect.Value)
	walk = func(v reflect.Value) {
		switch v.Kind() {
		case reflect.Float64:
			if v.CanSet() {
				v.SetFloat(answered(v.Float()))
			}
		case reflect.Pointer, reflect.Interface:
			if !v.IsNil() {
				walk(v.Elem())
			}
		case reflect.Struct:
			for i := 0; i < v.NumField(); i++ {
				walk(v.Field(i))
			}
		case reflect.Slice, reflect.Array:
			for i := 0; i < v.Len(); i++ {
				walk(v.Index(i))
			}
		}
	}
	walk(reflect.ValueOf(ptr))
}

// storedFit reads a calibration's fit as stored, in full precision, for
// computing what the server computes from it.
func (e *testEnv) storedFit(id string) db.CalibrationFit {
	e.t.Helper()
	cal, err := e.store.Calibration(context.Background(), e.site, uuid.MustParse(id))
	if err != nil {
		e.t.Fatalf("read calibration %s from the store: %v", id, err)
	}
	return cal.Fit
}
