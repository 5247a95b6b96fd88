package api

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"reflect"
	"strings"

	"github.com/go-playground/validator/v10"
	"github.com/labstack/echo/v4"
)

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
	return v
}

// check validates v and turns each failed rule into a 422 field issue.
func (s *Server) check(v any) error {
	err := s.validate.Struct(v)
	var ve validator.ValidationErrors
	if !errors.As(err, &ve) {
		return err
	}
	issues := make([]FieldIssue, 0, len(ve))
	for _, fe := range ve {
		issues = append(issues, FieldIssue{Field: jsonPath(fe.Namespace()), Reason: ruleReason(fe)})
	}
	return unprocessable(issues...)
}

// jsonPath drops the Go type name at the head of a validator namespace.
func jsonPath(ns string) string {
	if _, rest, ok := strings.Cut(ns, "."); ok {
		return rest
	}
	return ns
}

// ruleReason says in words which rule a value broke.
func ruleReason(fe validator.FieldError) string {
	switch fe.Tag() {
	case "required":
		return "is required"
	case "required_without":
		return "is required unless " + fe.Param() + " is given"
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
	case "gtefield":
		return "must not be less than " + fe.Param()
	}
	return "breaks the rule " + fe.Tag()
}

// bind decodes the JSON body into v, refusing unknown fields and trailing data.
func bind(c echo.Context, v any) error {
	body, err := io.ReadAll(c.Request().Body)
	if err != nil {
		return err
	}
	dec := json.NewDecoder(bytes.NewReader(body))
	dec.DisallowUnknownFields()
	if err := dec.Decode(v); err != nil {
		var ute *json.UnmarshalTypeError
		var se *json.SyntaxError
		switch {
		case errors.As(err, &ute):
			return badRequest(ute.Field, "wrong type: want "+ute.Type.String())
		case errors.As(err, &se):
			return badRequest("body", "malformed JSON: "+se.Error())
		case strings.HasPrefix(err.Error(), "json: unknown field "):
			return badRequest(strings.Trim(strings.TrimPrefix(err.Error(), "json: unknown field "), `"`), "unknown field")
		}
		return badRequest("body", err.Error())
	}
	if dec.More() {
		return badRequest("body", "trailing data after the JSON value")
	}
	return nil
}
