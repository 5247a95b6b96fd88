package api

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"reflect"
	"slices"
	"strings"
	"time"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/go-playground/validator/v10"
	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// The OpenAPI document marks record ids with format uuid; kin-openapi leaves
// that format unchecked unless it is defined, and then a malformed id in a
// path, query or body would not be named when the body has other faults.
func init() {
	openapi3.DefineStringFormatValidator("uuid", openapi3.NewCallbackValidator(func(s string) error {
		_, err := uuid.Parse(s)
		return err
	}))
}

// newValidator returns a validator that names fields by their JSON names.
func newValidator() *validator.Validate {
	v := validator.New(validator.WithRequiredStructEnabled())
	v.RegisterTagNameFunc(func(f reflect.StructField) string {
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		if name == "-" {
			return ""
		}
		return name
	})
	// plausible_day: a weld date from 1900-01-01 to one day after today (UTC).
	mustRegister(v, "plausible_day", func(fl validator.FieldLevel) bool {
		switch t := fl.Field().Interface().(type) {
		case db.Date:
			return t.IsZero() || db.PlausibleDay(t.Time, time.Now())
		case time.Time:
			return t.IsZero() || db.PlausibleDay(t, time.Now())
		}
		return false
	})
	// quantity and enum take a field's bounds and allowed words from the
	// registry (predict/quantity_table.go), found by the field's JSON name.
	mustRegister(v, "quantity", func(fl validator.FieldLevel) bool {
		q, ok := predict.LookupQuantity(fl.FieldName())
		f, isNum := number(fl.Field())
		return ok && isNum && q.Inside(f)
	})
	mustRegister(v, "enum", func(fl validator.FieldLevel) bool {
		e, ok := predict.LookupEnum(fl.FieldName())
		return ok && fl.Field().Kind() == reflect.String && e.Allows(fl.Field().String())
	})
	return v
}

func mustRegister(v *validator.Validate, tag string, fn validator.Func) {
	if err := v.RegisterValidation(tag, fn); err != nil {
		panic(err)
	}
}

// number returns the value of a numeric field (through a pointer).
func number(f reflect.Value) (float64, bool) {
	f = reflect.Indirect(f)
	switch f.Kind() {
	case reflect.Float32, reflect.Float64:
		return f.Float(), true
	case reflect.Int, reflect.Int32, reflect.Int64:
		return float64(f.Int()), true
	}
	return 0, false
}

// check validates v and turns each failed rule into a field issue: 422 for
// refused values, 400 when any failure is a field left out (the shape rule
// of issues).
func (s *Server) check(v any) error {
	err := s.validate.Struct(v)
	var ve validator.ValidationErrors
	if !errors.As(err, &ve) {
		return err
	}
	issues := make([]FieldIssue, 0, len(ve))
	absent := 0
	for _, fe := range ve {
		issues = append(issues, FieldIssue{Field: jsonPath(fe.Namespace()), Reason: ruleReason(fe, func(goName string) string { return jsonName(v, goName) })})
		if rv := reflect.ValueOf(fe.Value()); strings.HasPrefix(fe.Tag(), "required") && (!rv.IsValid() || rv.Kind() == reflect.Pointer && rv.IsNil()) {
			absent++
		}
	}
	if absent > 0 {
		return &invalidError{status: http.StatusBadRequest, issues: issues}
	}
	return unprocessable(issues...)
}

// jsonName returns the JSON name of the field goName of v's struct type, so
// that a reason naming another field uses the name the client sent.
func jsonName(v any, goName string) string {
	t := reflect.TypeOf(v)
	for t != nil && t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if t != nil && t.Kind() == reflect.Struct {
		if f, ok := t.FieldByName(goName); ok {
			if name, _, _ := strings.Cut(f.Tag.Get("json"), ","); name != "" && name != "-" {
				return name
			}
		}
	}
	return goName
}

// jsonPath drops the Go type name at the head of a validator namespace.
func jsonPath(ns string) string {
	if _, rest, ok := strings.Cut(ns, "."); ok {
		return rest
	}
	return ns
}

// ruleReason says in words which rule a value broke; name turns a Go field
// name in a rule's parameter into its JSON name.
func ruleReason(fe validator.FieldError, name func(string) string) string {
	switch fe.Tag() {
	case "required":
		switch fe.Kind() {
		case reflect.Int, reflect.Int64, reflect.Float64:
			return fmt.Sprintf("is required and may not be %v", fe.Value())
		}
		return "is required"
	case "required_without":
		return "is required unless " + name(fe.Param()) + " is given"
	case "gte":
		return fmt.Sprintf("must be at least %s (got %v)", fe.Param(), fe.Value())
	case "lte":
		return fmt.Sprintf("must be at most %s (got %v)", fe.Param(), fe.Value())
	case "gt":
		return fmt.Sprintf("must be greater than %s (got %v)", fe.Param(), fe.Value())
	case "min":
		return "must have at least " + fe.Param() + " item(s) or characters"
	case "max":
		return "must have at most " + fe.Param() + " item(s) or characters"
	case "oneof":
		return fmt.Sprintf("must be one of: %s (got %v)", fe.Param(), fe.Value())
	case "plausible_day":
		got := fmt.Sprint(fe.Value())
		switch t := fe.Value().(type) {
		case db.Date:
			got = t.String()
		case time.Time:
			got = t.Format(time.RFC3339)
		}
		return fmt.Sprintf("must fall between %s and %s, one day after today (UTC) (got %s)", db.EarliestDay, db.LatestDay(time.Now()), got)
	case "quantity":
		q, ok := predict.LookupQuantity(fe.Field())
		v, isNum := number(reflect.ValueOf(fe.Value()))
		if !ok || !isNum {
			return "is not a registered quantity"
		}
		return storedRefusal(q, v)
	case "enum":
		e, ok := predict.LookupEnum(fe.Field())
		if !ok {
			return "is not a registered enumeration"
		}
		return fmt.Sprintf("must be one of: %s (got %v)", strings.Join(e.Values, " "), fe.Value())
	case "gtefield":
		return "must not be less than " + name(fe.Param())
	}
	return "breaks the rule " + fe.Tag()
}

// bind decodes the JSON body into v, refusing unknown fields and trailing
// data, after rewriting every quantity into its stored spelling (units.go).
func bind(c echo.Context, v any) error {
	body, err := requestBody(c)
	if err != nil {
		return err
	}
	sent, err := decodeBody(body, v)
	if len(sent) > 0 {
		c.Set(sentKey, sent)
	}
	return err
}

// requestBody is the request's body: the bytes guard read whole, checked and
// kept, else (a blank or CSV body, which guard does not keep) read now and
// put back for whoever reads it next.
func requestBody(c echo.Context) ([]byte, error) {
	if body, ok := c.Get(ctxBody).([]byte); ok {
		return body, nil
	}
	req := c.Request()
	body, err := io.ReadAll(req.Body)
	if err != nil {
		return nil, err
	}
	req.Body = io.NopCloser(bytes.NewReader(body))
	return body, nil
}

// decodeBody is bind over a body already read: the quantities rewritten into
// their stored spellings, then decoded strictly into v. It returns what the
// rewriting took from the request's own spellings (for refusals in its words).
func decodeBody(body []byte, v any) (sentAs, error) {
	body, issues, sent := storedSpellings(body, reflect.TypeOf(v).Elem())
	if issues != nil {
		return sent, &invalidError{status: http.StatusBadRequest, issues: issues}
	}
	dec := json.NewDecoder(bytes.NewReader(body))
	dec.DisallowUnknownFields()
	if err := dec.Decode(v); err != nil {
		var ute *json.UnmarshalTypeError
		var se *json.SyntaxError
		switch {
		case errors.As(err, &ute):
			return sent, badRequest(ute.Field, "wrong type: want "+ute.Type.String())
		case errors.As(err, &se):
			return sent, badRequest("body", "malformed JSON: "+se.Error())
		case strings.HasPrefix(err.Error(), "json: unknown field "):
			return sent, badRequest(strings.Trim(strings.TrimPrefix(err.Error(), "json: unknown field "), `"`), "unknown field")
		}
		return sent, badRequest(failingField(body, v), err.Error())
	}
	if dec.More() {
		return sent, badRequest("body", "trailing data after the JSON value")
	}
	return sent, nil
}

// failingField names the top-level field of a JSON object body that does not
// decode into v (a pointer), e.g. a malformed UUID or date, or "body".
func failingField(body []byte, v any) string {
	var obj map[string]json.RawMessage
	if json.Unmarshal(body, &obj) != nil {
		return "body"
	}
	keys := make([]string, 0, len(obj))
	for k := range obj {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	t := reflect.TypeOf(v).Elem()
	for _, k := range keys {
		one, err := json.Marshal(map[string]json.RawMessage{k: obj[k]})
		if err == nil && json.Unmarshal(one, reflect.New(t).Interface()) != nil {
			return k
		}
	}
	return "body"
}
