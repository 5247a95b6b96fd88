package api

import (
	"context"
	"fmt"
	"strings"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/getkin/kin-openapi/openapi3filter"
	"github.com/getkin/kin-openapi/routers"
	"github.com/labstack/echo/v4"

	"etchlog/openapi"
)

func loadSpec() (*openapi3.T, error) {
	loader := openapi3.NewLoader()
	spec, err := loader.LoadFromData(openapi.Spec)
	if err != nil {
		return nil, fmt.Errorf("api: load OpenAPI document: %w", err)
	}
	if err := spec.Validate(context.Background()); err != nil {
		return nil, fmt.Errorf("api: OpenAPI document is invalid: %w", err)
	}
	return spec, nil
}

// specPath turns an echo path (/v1/coupons/:id) into an OpenAPI one (/v1/coupons/{id}).
func specPath(p string) string {
	parts := strings.Split(p, "/")
	for i, s := range parts {
		if strings.HasPrefix(s, ":") {
			parts[i] = "{" + s[1:] + "}"
		}
	}
	return strings.Join(parts, "/")
}

// conformTo returns middleware that checks each request against the
// document's operation for this method and path (parameters, body schema,
// unknown fields). A route without an operation is a programming error.
func (s *Server) conformTo(method, path string) (echo.MiddlewareFunc, error) {
	sp := specPath(path)
	item := s.spec.Paths.Find(sp)
	if item == nil || item.GetOperation(method) == nil {
		return nil, fmt.Errorf("api: route %s %s has no operation in the OpenAPI document", method, sp)
	}
	route := &routers.Route{Spec: s.spec, Path: sp, PathItem: item, Method: method, Operation: item.GetOperation(method)}
	opts := &openapi3filter.Options{MultiError: true, AuthenticationFunc: openapi3filter.NoopAuthenticationFunc, ExcludeResponseBody: true}
	units := item.Parameters.GetByInAndName(openapi3.ParameterInQuery, "units") != nil ||
		route.Operation.Parameters.GetByInAndName(openapi3.ParameterInQuery, "units") != nil
	return func(next echo.HandlerFunc) echo.HandlerFunc {
		return func(c echo.Context) error {
			if units {
				// Checked against the parameter's enum below; read by jsonAnswer.
				c.Set(ctxUnits, c.QueryParam("units"))
			}
			params := map[string]string{}
			for _, n := range c.ParamNames() {
				params[n] = c.Param(n)
			}
			in := &openapi3filter.RequestValidationInput{Request: c.Request(), PathParams: params, Route: route, Options: opts}
			if err := openapi3filter.ValidateRequest(c.Request().Context(), in); err != nil {
				return asRequestError(err)
			}
			return next(c)
		}
	}, nil
}

// asRequestError folds kin-openapi's multi-errors into one RequestError for problemFor.
func asRequestError(err error) error {
	if multi, ok := err.(openapi3.MultiError); ok {
		var issues []FieldIssue
		for _, e := range multi {
			if re, ok := e.(*openapi3filter.RequestError); ok {
				issues = append(issues, requestIssues(re)...)
				continue
			}
			issues = append(issues, FieldIssue{"request", e.Error()})
		}
		return &invalidError{status: requestStatus(multi), issues: issues}
	}
	return err
}
