package api

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"net/http"
	"regexp"
	"slices"
	"strings"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/getkin/kin-openapi/openapi3filter"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// Problem is an RFC 9457 problem details body. Errors lists each refused field.
type Problem struct {
	Type      string       `json:"type"`
	Title     string       `json:"title"`
	Status    int          `json:"status"`
	Detail    string       `json:"detail,omitempty"`
	Instance  string       `json:"instance,omitempty"`
	RequestID string       `json:"request_id,omitempty"`
	Errors    []FieldIssue `json:"errors,omitempty"`
	// ErrorsOmitted counts refused fields beyond the first maxIssues listed.
	ErrorsOmitted int `json:"errors_omitted,omitempty"`
	// ExistingID names the stored record a duplicate collides with.
	ExistingID string `json:"existing_id,omitempty"`
	// Groups are, on a fit refused for too few coupons, the calibration
	// groups that have coupons, closest to the requested one first.
	Groups []db.GroupCount `json:"groups,omitempty"`
	// Stream is, on a refused production stream, what it stored before the
	// refused chunk and the line to resend from.
	Stream *streamReport `json:"stream,omitempty"`
}

// FieldIssue names one refused request field and the reason.
type FieldIssue struct {
	Field  string `json:"field"`
	Reason string `json:"reason"`
}

// invalidError is a request that failed validation, with the HTTP status to send.
type invalidError struct {
	status  int
	issues  []FieldIssue
	omitted int // issues counted but not listed
}

func (e *invalidError) Error() string {
	parts := make([]string, len(e.issues))
	for i, is := range e.issues {
		parts[i] = is.Field + ": " + is.Reason
	}
	return strings.Join(parts, "; ")
}

// badRequest (400) is for a request whose shape is wrong: malformed JSON,
// unknown or missing fields, wrong types.
func badRequest(field, reason string) error {
	return &invalidError{status: http.StatusBadRequest, issues: []FieldIssue{{field, reason}}}
}

// unprocessable (422) is for well-formed values that are refused.
func unprocessable(issues ...FieldIssue) error {
	return &invalidError{status: http.StatusUnprocessableEntity, issues: issues}
}

// issues collects refused fields and applies the status rule: 400 when any
// issue is about the request's shape (a field left out, unknown or of the
// wrong type), else 422 (values refused).
type issues struct {
	list  []FieldIssue
	shape bool
}

// missing records a required field left out (the request's shape).
func (v *issues) missing(field, reason string) {
	v.list, v.shape = append(v.list, FieldIssue{field, reason}), true
}

// refused records a value given but refused.
func (v *issues) refused(field, reason string) { v.list = append(v.list, FieldIssue{field, reason}) }

// err returns the collected issues as one error, or nil.
func (v *issues) err() error {
	if len(v.list) == 0 {
		return nil
	}
	if v.shape {
		return &invalidError{status: http.StatusBadRequest, issues: v.list}
	}
	return unprocessable(v.list...)
}

// problemFor maps any handler error to its problem body. It is the only place
// where errors become HTTP.
func problemFor(err error) Problem {
	var se *streamError
	if errors.As(err, &se) {
		p := problemFor(se.err)
		p.Stream = &se.report
		return p
	}
	var inv *invalidError
	var fe *db.FieldError
	var pe *predict.InputError
	var he *echo.HTTPError
	var re *openapi3filter.RequestError
	var dup *db.DuplicateError
	switch {
	case errors.As(err, &inv):
		title := "The request is malformed"
		if inv.status == http.StatusUnprocessableEntity {
			title = "The request has values that are refused"
		}
		return Problem{Type: "urn:etchlog:problem:invalid", Title: title, Status: inv.status, Errors: inv.issues, ErrorsOmitted: inv.omitted}
	case errors.As(err, &re):
		issues := requestIssues(re)
		return Problem{Type: "urn:etchlog:problem:invalid", Title: "The request does not match the API description",
			Status: requestStatus(re), Errors: issues}
	case errors.Is(err, db.ErrBadCursor):
		return Problem{Type: "urn:etchlog:problem:invalid", Title: "The request is malformed", Status: http.StatusBadRequest,
			Detail: userDetail(err), Errors: []FieldIssue{{"cursor", db.ErrBadCursor.Error()}}}
	case errors.As(err, &fe):
		return Problem{Type: "urn:etchlog:problem:invalid", Title: "The request has values that are refused",
			Status: http.StatusUnprocessableEntity, Detail: userDetail(fe), Errors: []FieldIssue{{fe.Field, fe.Reason}}}
	case errors.As(err, &pe):
		return Problem{Type: "urn:etchlog:problem:invalid", Title: "The request has values that are refused",
			Status: http.StatusUnprocessableEntity, Detail: userDetail(pe), Errors: []FieldIssue{{pe.Field, pe.Reason}}}
	case errors.Is(err, predict.ErrTooFewSamples), errors.Is(err, predict.ErrDegenerate):
		p := Problem{Type: "urn:etchlog:problem:fit-refused", Title: "The selected coupons cannot support this fit",
			Status: http.StatusUnprocessableEntity, Detail: userDetail(err), Errors: []FieldIssue{{"coupons", fitRefusal(err)}}}
		var ng *db.NoGroupError
		if errors.As(err, &ng) {
			p.Groups = append([]db.GroupCount{}, ng.Groups...)
		}
		return p
	case errors.As(err, &dup):
		return Problem{Type: "urn:etchlog:problem:conflict", Title: "The write conflicts with stored records", Status: http.StatusConflict,
			Detail: userDetail(dup), Errors: []FieldIssue{{dup.Field, dup.Reason}}, ExistingID: dup.ExistingID.String()}
	case errors.Is(err, db.ErrForbidden):
		return Problem{Type: "about:blank", Title: http.StatusText(http.StatusForbidden), Status: http.StatusForbidden, Detail: userDetail(err)}
	case errors.Is(err, db.ErrNotFound):
		return Problem{Type: "urn:etchlog:problem:not-found", Title: "No such record", Status: http.StatusNotFound, Detail: userDetail(err)}
	case errors.Is(err, db.ErrConflict):
		return Problem{Type: "urn:etchlog:problem:conflict", Title: "The write conflicts with stored records", Status: http.StatusConflict, Detail: userDetail(err)}
	case db.Unavailable(err):
		return Problem{Type: "urn:etchlog:problem:unavailable", Title: "The database is out of reach", Status: http.StatusServiceUnavailable,
			Detail: "the record store did not answer; retry later (a retried write is safe under the same Idempotency-Key)"}
	case errors.Is(err, db.ErrVoided):
		return Problem{Type: "urn:etchlog:problem:voided", Title: "The record is voided", Status: http.StatusConflict, Detail: userDetail(err)}
	case errors.As(err, &he):
		return Problem{Type: "about:blank", Title: http.StatusText(he.Code), Status: he.Code, Detail: fmt.Sprint(he.Message)}
	}
	return Problem{Type: "about:blank", Title: "Internal error", Status: http.StatusInternalServerError,
		Detail: "the server could not complete the request; it has been logged with the request id"}
}

// pkgPrefix and actionPrefix are the wrapping a message picks up on its way
// through the layers ("db: create coupon: "): the user gets what is left.
var (
	pkgPrefix    = regexp.MustCompile(`\b(?:db|api|predict): `)
	actionPrefix = regexp.MustCompile(`^(?:(?:create|correct|void|list|activate|derive|narrow|read|fit) [^:]*: )+`)
)

// userDetail is an error's message in the user's words: without package
// prefixes or the names of the operations it passed through.
func userDetail(err error) string {
	msg := pkgPrefix.ReplaceAllString(err.Error(), "")
	if rest := actionPrefix.ReplaceAllString(msg, ""); rest != "" {
		msg = rest
	}
	return msg
}

// rangeKeywords are the schema keywords whose failure means a well-formed
// value that is refused (outside its range or length, not one of the
// allowed words): 422 like the validator's rules, not malformed (400).
var rangeKeywords = map[string]bool{
	"minimum": true, "maximum": true, "exclusiveMinimum": true, "exclusiveMaximum": true,
	"minLength": true, "maxLength": true, "minItems": true, "maxItems": true, "enum": true, "pattern": true,
}

// requestStatus is the status for an OpenAPI request validation error: 422
// when every failure is a value out of its range or length, else 400.
func requestStatus(err error) int {
	leaves, refused := 0, 0
	var walk func(err error)
	walk = func(err error) {
		var multi openapi3.MultiError
		var re *openapi3filter.RequestError
		var se *openapi3.SchemaError
		switch {
		case errors.As(err, &multi):
			for _, e := range multi {
				walk(e)
			}
		case errors.As(err, &re) && re.Err != nil:
			walk(re.Err)
		case errors.As(err, &se):
			leaves++
			if rangeKeywords[se.SchemaField] && rightType(se) {
				refused++
			}
		default:
			leaves++
		}
	}
	walk(err)
	if leaves > 0 && refused == leaves {
		return http.StatusUnprocessableEntity
	}
	return http.StatusBadRequest
}

// rightType reports whether a refused value has its schema's type: 12 for
// an enum of words is a wrong type (400), "DC+" a refused word (422).
func rightType(se *openapi3.SchemaError) bool {
	if se.Schema == nil || se.Schema.Type == nil {
		return true
	}
	switch se.Value.(type) {
	case string:
		return se.Schema.Type.Permits(openapi3.TypeString)
	case float64, int, int64, json.Number:
		return se.Schema.Type.Permits(openapi3.TypeNumber) || se.Schema.Type.Permits(openapi3.TypeInteger)
	case []any:
		return se.Schema.Type.Permits(openapi3.TypeArray)
	case map[string]any:
		return se.Schema.Type.Permits(openapi3.TypeObject)
	case bool:
		return se.Schema.Type.Permits(openapi3.TypeBoolean)
	}
	return false
}

var unsupportedProperty = regexp.MustCompile(`^property "([^"]+)" is unsupported`)

// requestIssues turns an OpenAPI request validation error into field issues,
// naming the field by its JSON path.
func requestIssues(re *openapi3filter.RequestError) []FieldIssue {
	var issues []FieldIssue
	var walk func(err error, param string)
	walk = func(err error, param string) {
		var multi openapi3.MultiError
		var se *openapi3.SchemaError
		switch {
		case errors.As(err, &multi):
			for _, e := range multi {
				walk(e, param)
			}
		case errors.As(err, &se):
			if name, reason, ok := missingSpelling(se); ok {
				is := FieldIssue{Field: strings.TrimPrefix(strings.Join(append(se.JSONPointer(), name), "."), "."), Reason: reason}
				if is.Field == "" {
					is.Field = "body"
				}
				if !slices.Contains(issues, is) {
					issues = append(issues, is)
				}
				return
			}
			field := strings.Join(se.JSONPointer(), ".")
			if param != "" {
				field = strings.TrimSuffix(param+"."+field, ".")
			}
			// An unknown property is reported on its parent; name the property itself.
			if m := unsupportedProperty.FindStringSubmatch(se.Reason); m != nil {
				field = strings.TrimPrefix(field+"."+m[1], ".")
			}
			if field == "" {
				field = "body"
			}
			issues = append(issues, FieldIssue{Field: field, Reason: se.Reason})
		default:
			field := param
			if field == "" {
				field = "body"
			}
			var syn *json.SyntaxError
			reason := err.Error()
			if errors.As(err, &syn) {
				reason = "malformed JSON: " + syn.Error()
			}
			issues = append(issues, FieldIssue{Field: field, Reason: reason})
		}
	}
	param := ""
	if re.Parameter != nil {
		param = re.Parameter.Name
	}
	switch {
	case re.Err != nil:
		walk(re.Err, param)
	case re.Parameter == nil && re.RequestBody != nil: // the only body check without an error: its media type
		got := ""
		if re.Input != nil && re.Input.Request != nil {
			got = re.Input.Request.Header.Get(echo.HeaderContentType)
		}
		reason := "header is required: send Content-Type: application/json with the body"
		if got != "" {
			reason = fmt.Sprintf("header must be application/json (got %q)", got)
		}
		issues = append(issues, FieldIssue{Field: echo.HeaderContentType, Reason: reason})
	default:
		issues = append(issues, FieldIssue{Field: param, Reason: re.Reason})
	}
	return issues
}

// statusClientClosed is logged (never sent) for a request whose client went
// away before the answer; the number follows a common proxy convention.
const statusClientClosed = 499

// retryAfterSeconds is what a 503 or 429 answer asks the client to wait.
const retryAfterSeconds = "2"

// bound lists each refused field once and at most maxIssues of them, counting
// the rest, and sums them up in Detail, so an answer's size does not grow
// with the request.
func (p *Problem) bound() {
	if len(p.Errors) == 0 {
		return
	}
	seen := make(map[FieldIssue]bool, min(len(p.Errors), maxIssues))
	out := make([]FieldIssue, 0, min(len(p.Errors), maxIssues))
	for _, is := range p.Errors {
		if seen[is] {
			continue
		}
		if len(out) == maxIssues {
			p.ErrorsOmitted++
			continue
		}
		seen[is] = true
		out = append(out, is)
	}
	p.Errors = out
	if p.Detail == "" {
		p.Detail = out[0].Field + ": " + out[0].Reason
		if more := len(out) - 1 + p.ErrorsOmitted; more > 0 {
			p.Detail += fmt.Sprintf(" (and %d more refused field(s); see errors)", more)
		}
	}
}

// errorHandler writes every error as problem+json and logs the unexpected ones.
func errorHandler(log *slog.Logger) echo.HTTPErrorHandler {
	return func(err error, c echo.Context) {
		if c.Response().Committed {
			return
		}
		if c.Request().Context().Err() != nil && (errors.Is(err, context.Canceled) || errors.Is(err, context.DeadlineExceeded) || db.Unavailable(err)) {
			// Nobody reads this answer; the access log records 499.
			log.Info("client closed request", "request_id", c.Response().Header().Get(echo.HeaderXRequestID),
				"method", c.Request().Method, "path", c.Request().URL.Path)
			c.Response().Status = statusClientClosed
			return
		}
		p := problemFor(err)
		if sent, ok := c.Get(sentKey).(sentAs); ok {
			sent.reword(p.Errors)
		}
		for i := range p.Errors { // reasons passed up from the store or the models lose their package prefixes
			p.Errors[i].Reason = pkgPrefix.ReplaceAllString(p.Errors[i].Reason, "")
		}
		p.bound()
		p.Instance = c.Request().URL.Path
		p.RequestID = c.Response().Header().Get(echo.HeaderXRequestID)
		switch {
		case p.Status == http.StatusServiceUnavailable || p.Status == http.StatusTooManyRequests:
			c.Response().Header().Set("Retry-After", retryAfterSeconds)
			log.Warn("request refused", "request_id", p.RequestID, "method", c.Request().Method, "path", p.Instance, "status", p.Status, "err", err)
		case p.Status >= 500:
			log.Error("request failed", "request_id", p.RequestID, "method", c.Request().Method, "path", p.Instance, "err", err)
		}
		c.Response().Header().Set(echo.HeaderContentType, "application/problem+json")
		c.Response().WriteHeader(p.Status)
		_ = writeProblem(c.Response(), p)
	}
}

// missingSpelling recognises a quantity required in one of its spellings
// (an anyOf of required-only alternatives) that the body gives in none, and
// names it as the request would: its first spelling, with the others. A
// body that is not an object at all is named as such, once.
func missingSpelling(se *openapi3.SchemaError) (string, string, bool) {
	for e := se; e != nil; {
		if e.SchemaField == "anyOf" && e.Schema != nil && len(e.Schema.AnyOf) > 1 {
			if _, isObject := e.Value.(map[string]any); !isObject {
				return "", "want a JSON object", true
			}
			var names []string
			for _, alt := range e.Schema.AnyOf {
				if alt.Value == nil || len(alt.Value.Required) != 1 || len(alt.Value.Properties) > 0 {
					names = nil
					break
				}
				names = append(names, alt.Value.Required[0])
			}
			if names != nil {
				return names[0], "is required (as one of " + strings.Join(names, ", ") + ")", true
			}
		}
		var next *openapi3.SchemaError
		if !errors.As(e.Origin, &next) {
			break
		}
		e = next
	}
	return "", "", false
}
