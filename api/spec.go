package api

import (
	"context"
	"fmt"
	"net/http"
	"slices"
	"strings"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/getkin/kin-openapi/openapi3filter"
	"github.com/getkin/kin-openapi/routers"
	"github.com/labstack/echo/v4"

	"etchlog/openapi"
	"etchlog/predict"
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
	leaveBoundsToRegistry(spec)
	return spec, nil
}

// leaveBoundsToRegistry drops, from the copy of the document that requests
// are checked against, the bounds of every registered quantity: the
// validator refuses those values from the registry, after converting the
// spelling the client used, with one wording. The document still states the
// same bounds (a test compares them with the registry).
func leaveBoundsToRegistry(spec *openapi3.T) {
	for _, ref := range spec.Components.Schemas {
		eachProperty(ref.Value, func(name string, p *openapi3.SchemaRef) {
			if _, ok := predict.LookupQuantity(name); ok && p.Ref == "" && p.Value != nil {
				p.Value.Min, p.Value.Max = nil, nil
				p.Value.ExclusiveMin, p.Value.ExclusiveMax = openapi3.ExclusiveBound{}, openapi3.ExclusiveBound{}
			}
		})
	}
}

// eachProperty calls fn for every property of s, those of its inline
// allOf/anyOf/oneOf members included (a $ref member is a component of its own).
func eachProperty(s *openapi3.Schema, fn func(name string, p *openapi3.SchemaRef)) {
	if s == nil {
		return
	}
	for name, p := range s.Properties {
		fn(name, p)
	}
	for _, group := range [][]*openapi3.SchemaRef{s.AllOf, s.AnyOf, s.OneOf} {
		for _, m := range group {
			if m.Ref == "" {
				eachProperty(m.Value, fn)
			}
		}
	}
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

// multiErrorBodyLimit is the largest body whose every refused field is
// listed; a larger faulty body is answered with its first fault.
const multiErrorBodyLimit = 64 << 10

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
	first := &openapi3filter.Options{AuthenticationFunc: openapi3filter.NoopAuthenticationFunc, ExcludeResponseBody: true}
	stream := false
	if rb := route.Operation.RequestBody; rb != nil && rb.Value != nil && rb.Value.Content.Get("application/json") == nil {
		stream = true // its handler reads and checks the body row by row
		first.ExcludeRequestBody = true
	}
	all := *first
	all.MultiError = true
	// A body the compiled schema passes needs only the parameters checked.
	quick := compileQuick(route.Operation)
	params := *first
	params.ExcludeRequestBody = true
	known := queryNames(item, route.Operation)
	api := strings.HasPrefix(sp, "/v1/") // the page, probes and the document ignore stray parameters
	units := item.Parameters.GetByInAndName(openapi3.ParameterInQuery, "units") != nil ||
		route.Operation.Parameters.GetByInAndName(openapi3.ParameterInQuery, "units") != nil
	return func(next echo.HandlerFunc) echo.HandlerFunc {
		return func(c echo.Context) error {
			if api {
				if err := unknownQuery(c, known); err != nil {
					return err
				}
			}
			if units {
				// Checked against the parameter's enum below; read by jsonAnswer.
				c.Set(ctxUnits, c.QueryParam("units"))
			}
			pathParams := map[string]string{}
			for _, n := range c.ParamNames() {
				pathParams[n] = c.Param(n)
			}
			// The first pass stops at the first fault, so a valid request
			// costs one walk and a hostile one cannot grow an error per item.
			// Only a body small enough to bound the list is walked again to
			// name every refused field.
			req := c.Request()
			if stream { // the security check reads a body whole (to offer it to each scheme): keep a stream from it
				req = withoutBody(req)
			}
			in := &openapi3filter.RequestValidationInput{Request: req, PathParams: pathParams, Route: route, Options: first}
			if quick != nil && !stream {
				if body, ok := c.Get(ctxBody).([]byte); ok && quick.accepts(req.Header.Get(echo.HeaderContentType), body) {
					in.Options = &params
					// The body is checked: keep the security check from reading
					// and copying it again (its authentication reads nothing).
					in.Request = withoutBody(req)
				}
			}
			if err := openapi3filter.ValidateRequest(req.Context(), in); err != nil {
				if req.ContentLength <= multiErrorBodyLimit {
					in.Options, in.Request = &all, req // the body too, to name every fault
					if err2 := openapi3filter.ValidateRequest(req.Context(), in); err2 != nil {
						err = err2
					}
				}
				return asRequestError(err)
			}
			return next(c)
		}
	}, nil
}

// withoutBody is a shallow copy of req with no body, for the OpenAPI check's
// security step, which reads a body whole to offer it to each scheme.
func withoutBody(req *http.Request) *http.Request {
	shallow := *req
	shallow.Body, shallow.ContentLength = http.NoBody, 0
	return &shallow
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

// queryNames lists the query parameters an operation takes, its path's included.
func queryNames(item *openapi3.PathItem, op *openapi3.Operation) []string {
	var names []string
	for _, ps := range []openapi3.Parameters{item.Parameters, op.Parameters} {
		for _, p := range ps {
			if p.Value != nil && p.Value.In == openapi3.ParameterInQuery {
				names = append(names, p.Value.Name)
			}
		}
	}
	slices.Sort(names)
	return names
}

// unknownQuery refuses (400) every query parameter the operation does not
// take, naming it: a misspelt filter (welder=) must not return the
// unfiltered list as if it had been applied.
func unknownQuery(c echo.Context, known []string) error {
	var issues []FieldIssue
	for name := range c.QueryParams() {
		if slices.Contains(known, name) {
			continue
		}
		reason := "unknown query parameter; this operation takes none"
		if len(known) > 0 {
			reason = "unknown query parameter; this operation takes " + strings.Join(known, ", ")
		}
		issues = append(issues, FieldIssue{name, reason})
	}
	if issues == nil {
		return nil
	}
	slices.SortFunc(issues, func(a, b FieldIssue) int { return strings.Compare(a.Field, b.Field) })
	return &invalidError{status: http.StatusBadRequest, issues: issues}
}
