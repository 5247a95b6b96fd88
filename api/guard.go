package api

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/labstack/echo/v4"
)

// maxDepth caps how deeply a body may nest arrays and objects; etchlog's
// deepest request needs 4 levels.
const maxDepth = 32

// maxIssues caps how many refused fields one answer lists; the rest are
// counted, so an answer stays small whatever the request holds.
const maxIssues = 50

// freeText are the body fields written as prose (remarks, reasons, notes):
// they may hold tabs and line breaks. Every other text refuses control characters.
var freeText = map[string]bool{"note": true, "notes": true, "reason": true, "remark": true, "remarks": true}

// identifiers are the body fields that name a thing (a mark, a person, a lot):
// when given they must hold more than white space.
var identifiers = map[string]bool{
	"code": true, "coupon_mark": true, "filler_lot": true, "inspector": true, "power_source_id": true,
	"record_number": true, "rule_set_id": true, "section": true, "weld_id": true, "welder_id": true,
}

// guard runs before the OpenAPI check on every route. It reads the body once
// (an over-limit body, chunked or not, is 413), and refuses what PostgreSQL or
// the JSON decoder would otherwise take badly: invalid UTF-8 and duplicate
// keys (400), control characters in text (422 naming the field, 400 naming a
// query or path parameter) and blank identifiers (422).
func (s *Server) guard(next echo.HandlerFunc) echo.HandlerFunc {
	return func(c echo.Context) error {
		if err := checkParams(c); err != nil {
			return err
		}
		req := c.Request()
		if req.Body == nil || req.Body == http.NoBody || c.Path() == streamPath {
			return next(c) // a stream's lines are checked one by one (streamRow)
		}
		body, err := readBody(req)
		if err != nil {
			var he *echo.HTTPError
			if errors.As(err, &he) {
				return he // the body limit's 413
			}
			return err
		}
		req.Body = io.NopCloser(bytes.NewReader(body))
		req.ContentLength = int64(len(body))
		if len(bytes.TrimSpace(body)) == 0 {
			return next(c)
		}
		if isCSV(req) { // an import file: its reader names each faulty cell by row and column
			if !utf8.Valid(body) {
				return badRequest("body", "is not valid UTF-8")
			}
			return next(c)
		}
		if err := checkBody(body); err != nil {
			return err
		}
		// Kept for the OpenAPI check's compiled schema (conformTo) and to run
		// a request again (admitKept).
		c.Set(ctxBody, body)
		return next(c)
	}
}

// readBody reads a request's body whole, as io.ReadAll does, into a buffer
// sized first from the Content-Length the client sent (up to presizeLimit:
// the body limit, not the header, bounds what is read), so that a JSON body
// is read in one allocation instead of a buffer grown three times.
func readBody(req *http.Request) ([]byte, error) {
	n := req.ContentLength
	if n < 0 || n > presizeLimit {
		n = 512
	}
	b := make([]byte, 0, n+1) // the extra byte takes the read that finds EOF
	for {
		if len(b) == cap(b) {
			b = append(b, 0)[:len(b)]
		}
		m, err := req.Body.Read(b[len(b):cap(b)])
		b = b[:len(b)+m]
		if err == io.EOF {
			return b, nil
		}
		if err != nil {
			return b, err
		}
	}
}

// presizeLimit is the largest Content-Length readBody sizes its buffer by.
const presizeLimit = 1 << 20

// isCSV reports a body sent as text/csv (parameters such as charset aside).
func isCSV(req *http.Request) bool {
	mt, _, _ := strings.Cut(req.Header.Get(echo.HeaderContentType), ";")
	return strings.EqualFold(strings.TrimSpace(mt), "text/csv")
}

// checkParams refuses control characters in query and path parameters.
func checkParams(c echo.Context) error {
	for name, vals := range c.Request().URL.Query() {
		if hasControl(name, false) {
			return badRequest(printable(name), "a query parameter name may not hold control characters")
		}
		for _, v := range vals {
			if hasControl(v, false) || !utf8.ValidString(v) {
				return badRequest(name, "may not hold control characters or invalid UTF-8")
			}
		}
	}
	for i, name := range c.ParamNames() {
		if v := c.ParamValues()[i]; hasControl(v, false) || !utf8.ValidString(v) {
			return badRequest(name, "may not hold control characters or invalid UTF-8")
		}
	}
	return nil
}

// hasControl reports a C0 or C1 control character or DEL; tab, line feed and
// carriage return are allowed when prose is.
func hasControl(s string, prose bool) bool {
	for _, r := range s {
		if prose && (r == '\t' || r == '\n' || r == '\r') {
			continue
		}
		if r < 0x20 || r == 0x7f || (r >= 0x80 && r <= 0x9f) {
			return true
		}
	}
	return false
}

// printable replaces control characters so a name can be echoed back.
func printable(s string) string {
	return strings.Map(func(r rune) rune {
		if r < 0x20 || r == 0x7f || (r >= 0x80 && r <= 0x9f) {
			return '?'
		}
		return r
	}, s)
}

// checkBody walks a JSON body token by token (memory bounded by its nesting,
// not its length) and collects at most maxIssues refused fields.
func checkBody(body []byte) error {
	if !utf8.Valid(body) {
		return badRequest("body", "is not valid UTF-8")
	}
	if cleanBody(body) {
		return nil
	}
	return walkBody(body)
}

// walkBody is checkBody's walk of a body of valid UTF-8, naming every fault.
func walkBody(body []byte) error {
	w := bodyWalker{dec: json.NewDecoder(bytes.NewReader(body))}
	w.dec.UseNumber()
	if err := w.value(""); err != nil {
		var se *json.SyntaxError
		if errors.As(err, &se) {
			return badRequest("body", "malformed JSON: "+se.Error())
		}
		if !errors.Is(err, errStop) {
			return badRequest("body", "malformed JSON: "+err.Error())
		}
	}
	if w.issues.n == 0 {
		return nil
	}
	return w.issues.err(w.status)
}

// errStop ends a walk that has found a fault it cannot go past.
var errStop = errors.New("stop")

// issueList keeps the first maxIssues issues and counts the rest.
type issueList struct {
	list []FieldIssue
	n    int
}

func (l *issueList) add(field, reason string) {
	l.n++
	if len(l.list) < maxIssues {
		l.list = append(l.list, FieldIssue{field, reason})
	}
}

func (l *issueList) err(status int) error {
	return &invalidError{status: status, issues: l.list, omitted: l.n - len(l.list)}
}

type bodyWalker struct {
	dec    *json.Decoder
	depth  int
	issues issueList
	status int
}

// value reads one JSON value at path.
func (w *bodyWalker) value(path string) error {
	tok, err := w.dec.Token()
	if err != nil {
		return err
	}
	switch t := tok.(type) {
	case json.Delim:
		if w.depth++; w.depth > maxDepth {
			w.fail(http.StatusBadRequest, path, fmt.Sprintf("nests deeper than %d levels", maxDepth))
			return errStop
		}
		defer func() { w.depth-- }()
		if t == '{' {
			return w.object(path)
		}
		if t == '[' {
			return w.array(path)
		}
	case string:
		w.text(path, t)
	}
	return nil
}

func (w *bodyWalker) object(path string) error {
	seen := map[string]bool{}
	for w.dec.More() {
		tok, err := w.dec.Token()
		if err != nil {
			return err
		}
		key, _ := tok.(string)
		field := join(path, key)
		if hasControl(key, false) {
			w.fail(http.StatusBadRequest, join(path, printable(key)), "a field name may not hold control characters")
		} else if seen[key] {
			w.fail(http.StatusBadRequest, field, "is given more than once; give each field once")
		}
		seen[key] = true
		if err := w.value(field); err != nil {
			return err
		}
	}
	_, err := w.dec.Token() // '}'
	return err
}

func (w *bodyWalker) array(path string) error {
	for i := 0; w.dec.More(); i++ {
		if err := w.value(path + "[" + strconv.Itoa(i) + "]"); err != nil {
			return err
		}
	}
	_, err := w.dec.Token() // ']'
	return err
}

// text checks one string value by its field name (the last path element).
func (w *bodyWalker) text(path, v string) {
	if why := textRefusal(path[strings.LastIndexAny(path, ".]")+1:], v); why != "" {
		w.fail(http.StatusUnprocessableEntity, path, why)
	}
}

// textRefusal says why text v of field name is refused (control characters,
// a blank identifier), or "".
func textRefusal(name, v string) string {
	switch {
	case hasControl(v, freeText[name]):
		return "may not hold control characters" + map[bool]string{true: " other than tab and line break", false: ""}[freeText[name]]
	case identifiers[name] && v != "" && strings.TrimSpace(v) == "":
		return "is blank: give a value with more than white space"
	}
	return ""
}

// fail records an issue; any 400 makes the whole answer 400 (the request is malformed).
func (w *bodyWalker) fail(status int, field, reason string) {
	if w.status != http.StatusBadRequest {
		w.status = status
	}
	w.issues.add(field, reason)
}

func join(path, key string) string {
	if path == "" {
		return key
	}
	return fmt.Sprintf("%s.%s", path, key)
}
