// Package spectest checks HTTP answers against etchlog's OpenAPI document.
// The tests of every package that talks to the server send each answer they
// receive through one Checker, so the document is held to what the server
// really returns (status, Content-Type, headers and body), errors included.
package spectest

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"sync/atomic"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/getkin/kin-openapi/openapi3filter"
	"github.com/getkin/kin-openapi/routers"
	"github.com/getkin/kin-openapi/routers/legacy"

	"etchlog/openapi"
)

// Checker validates answers against the embedded document and counts them.
type Checker struct {
	router  routers.Router
	problem *openapi3.Schema
	checked atomic.Int64
}

// New loads and validates the embedded document.
func New() (*Checker, error) {
	doc, err := openapi3.NewLoader().LoadFromData(openapi.Spec)
	if err != nil {
		return nil, fmt.Errorf("spectest: load openapi.yaml: %w", err)
	}
	if err := doc.Validate(context.Background()); err != nil {
		return nil, fmt.Errorf("spectest: openapi.yaml is invalid: %w", err)
	}
	// Test servers listen on any host and port; match paths alone.
	doc.Servers = nil
	closeResponseObjects(doc)
	router, err := legacy.NewRouter(doc)
	if err != nil {
		return nil, fmt.Errorf("spectest: route openapi.yaml: %w", err)
	}
	ref := doc.Components.Schemas["Problem"]
	if ref == nil || ref.Value == nil {
		return nil, errors.New("spectest: openapi.yaml has no Problem schema")
	}
	return &Checker{router: router, problem: ref.Value}, nil
}

// Default is the Checker every test package shares; it panics if the
// embedded document cannot be loaded, which every test would report anyway.
var Default = func() *Checker {
	c, err := New()
	if err != nil {
		panic(err)
	}
	return c
}()

var options = &openapi3filter.Options{
	MultiError:            true,
	IncludeResponseStatus: true, // a status the operation does not list is a mismatch
	AuthenticationFunc:    openapi3filter.NoopAuthenticationFunc,
}

// Check validates one answer to req. An answer to a path or method the
// document does not describe must be a 404 or 405 problem+json.
func (c *Checker) Check(req *http.Request, status int, header http.Header, body []byte) error {
	c.checked.Add(1)
	what := req.Method + " " + req.URL.RequestURI()
	route, params, err := c.router.FindRoute(req)
	if err != nil {
		return c.checkUnrouted(what, status, header, body)
	}
	in := &openapi3filter.ResponseValidationInput{
		RequestValidationInput: &openapi3filter.RequestValidationInput{Request: req, PathParams: params, Route: route, Options: options},
		Status:                 status,
		Header:                 header,
		Body:                   io.NopCloser(bytes.NewReader(body)),
		Options:                options,
	}
	if err := openapi3filter.ValidateResponse(req.Context(), in); err != nil {
		return fmt.Errorf("%s answered %d, which openapi.yaml (%s) does not describe: %w", what, status, route.Operation.OperationID, err)
	}
	return nil
}

// checkUnrouted holds an answer outside every operation to the Problem schema.
func (c *Checker) checkUnrouted(what string, status int, header http.Header, body []byte) error {
	if status != http.StatusNotFound && status != http.StatusMethodNotAllowed {
		return fmt.Errorf("%s has no operation in openapi.yaml but answered %d, want 404 or 405", what, status)
	}
	if ct := header.Get("Content-Type"); ct != "application/problem+json" {
		return fmt.Errorf("%s answered %d with Content-Type %q, want application/problem+json", what, status, ct)
	}
	var v any
	if err := json.Unmarshal(body, &v); err != nil {
		return fmt.Errorf("%s answered %d with a body that is not JSON: %w", what, status, err)
	}
	if err := c.problem.VisitJSON(v, openapi3.MultiErrors()); err != nil {
		return fmt.Errorf("%s answered %d with a body that is not a Problem: %w", what, status, err)
	}
	return nil
}

// Checked is how many answers Check has seen.
func (c *Checker) Checked() int64 { return c.checked.Load() }

// Transport is an http.RoundTripper that reads each answer completely,
// checks it with Checker and hands it on unchanged. Failures go to Fail
// (typically a test's Errorf); the answer is returned either way.
type Transport struct {
	Base    http.RoundTripper // nil means http.DefaultTransport
	Checker *Checker
	Fail    func(format string, args ...any)
}

// RoundTrip implements http.RoundTripper.
func (t *Transport) RoundTrip(req *http.Request) (*http.Response, error) {
	base := t.Base
	if base == nil {
		base = http.DefaultTransport
	}
	res, err := base.RoundTrip(req)
	if err != nil {
		return nil, err
	}
	body, err := io.ReadAll(res.Body)
	res.Body.Close()
	if err != nil {
		return nil, err
	}
	res.Body = io.NopCloser(bytes.NewReader(body))
	if err := t.Checker.Check(req, res.StatusCode, res.Header, body); err != nil {
		t.Fail("%v", err)
	}
	return res, nil
}

func init() {
	// Answers that are text to a client: the page and the export (one JSON
	// document per line, described in the operation's prose).
	openapi3filter.RegisterBodyDecoder("text/html", openapi3filter.PlainBodyDecoder)
	openapi3filter.RegisterBodyDecoder("application/x-ndjson", openapi3filter.PlainBodyDecoder)
	// A printed record: bytes, checked by type only.
	openapi3filter.RegisterBodyDecoder("application/pdf", openapi3filter.FileBodyDecoder)
}

// closeResponseObjects makes every object schema reachable from a response
// refuse properties it does not list (unless it says what extra properties
// may hold), so an answer cannot carry a field the document does not describe.
// Only this checker's copy of the document changes.
func closeResponseObjects(doc *openapi3.T) {
	no := false
	seen := map[*openapi3.Schema]bool{}
	var walk func(ref *openapi3.SchemaRef, part bool)
	walk = func(ref *openapi3.SchemaRef, part bool) {
		if ref == nil || ref.Value == nil || seen[ref.Value] {
			return
		}
		s := ref.Value
		seen[s] = true
		// A part of an allOf sees only its own properties: leave it open.
		if !part && len(s.Properties) > 0 && s.AdditionalProperties.Has == nil && s.AdditionalProperties.Schema == nil {
			s.AdditionalProperties.Has = &no
		}
		for _, p := range s.Properties {
			walk(p, false)
		}
		walk(s.Items, false)
		walk(s.AdditionalProperties.Schema, false)
		for _, sub := range s.AllOf {
			walk(sub, true)
		}
		for _, sub := range append(append(openapi3.SchemaRefs{}, s.AnyOf...), s.OneOf...) {
			walk(sub, false)
		}
	}
	for _, item := range doc.Paths.Map() {
		for _, op := range item.Operations() {
			for _, res := range op.Responses.Map() {
				if res.Value == nil {
					continue
				}
				for _, mt := range res.Value.Content {
					walk(mt.Schema, false)
				}
			}
		}
	}
}
