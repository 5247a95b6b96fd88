package api_test

import (
	"bytes"
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"regexp"
	"strings"
	"sync"
	"testing"

	"etchlog/api"
	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/openapi/spectest"
)

// testEnv is the whole API over the package's test database, with one user
// per role at a site of the test's own.
type testEnv struct {
	t      testing.TB
	srv    *api.Server
	url    string
	store  *db.Store
	site   string
	tokens map[string]string // role → bearer token

	mu    sync.Mutex
	cache map[string]string // shared fixture records, by kind
}

// userName is the name of the test user holding role.
func userName(role string) string { return "test-" + role }

// newEnv starts the API on an httptest server for one test.
func newEnv(tb testing.TB) *testEnv {
	tb.Helper()
	return newEnvWith(tb, api.Options{})
}

// newEnvWith is newEnv with server options (its Logger is the test log's).
func newEnvWith(tb testing.TB, opt api.Options) *testEnv {
	tb.Helper()
	store := dbtest.Store(tb)
	opt.Logger = slog.New(slog.NewJSONHandler(testWriter{tb}, &slog.HandlerOptions{Level: slog.LevelError}))
	srv, err := api.New(store, opt)
	if err != nil {
		tb.Fatalf("api.New: %v", err)
	}
	ts := httptest.NewServer(srv)
	tb.Cleanup(ts.Close)
	e := &testEnv{t: tb, srv: srv, url: ts.URL, store: store, site: dbtest.Site(tb), tokens: map[string]string{}, cache: map[string]string{}}
	for _, role := range []string{db.RoleTechnician, db.RoleEngineer, db.RoleAuditor} {
		tok, err := db.NewToken()
		if err != nil {
			tb.Fatal(err)
		}
		if err := dbtest.Owner(tb).PutUser(context.Background(), db.User{Site: e.site, Name: userName(role), Role: role}, tok); err != nil {
			tb.Fatalf("PutUser(%s): %v", role, err)
		}
		e.tokens[role] = tok
	}
	return e
}

// shared returns the id of a fixture record made once per env by mk.
func (e *testEnv) shared(kind string, mk func() string) string {
	e.t.Helper()
	e.mu.Lock()
	id, ok := e.cache[kind]
	e.mu.Unlock()
	if !ok {
		id = mk()
		e.mu.Lock()
		e.cache[kind] = id
		e.mu.Unlock()
	}
	return id
}

// pqr, procedure and coupon return the env's shared fixture records.
func (e *testEnv) pqr() string { return e.shared("pqr", e.mustQualificationRecord) }

func (e *testEnv) procedure() string { return e.shared("procedure", e.mustProcedure) }

func (e *testEnv) coupon() string {
	// 60 mm plate, so that every plausible penetration (up to 50 mm) fits
	// under its base-metal thickness in the measurement validation tables.
	return e.shared("coupon", func() string {
		b := couponBody(e.procedure(), "", uniq("C"))
		b["thickness_mm"] = 60.0
		return e.create("/v1/coupons", "technician", b)["id"].(string)
	})
}

// testWriter sends the server's error log lines to the test log.
type testWriter struct{ tb testing.TB }

func (w testWriter) Write(p []byte) (int, error) {
	w.tb.Logf("server log: %s", bytes.TrimSpace(p))
	return len(p), nil
}

// reply is one HTTP answer, read completely.
type reply struct {
	status int
	header http.Header
	body   []byte
}

// do sends a request as the user holding role ("" sends no token). body is
// nil (no body), a string or []byte (sent as is) or any value (sent as JSON).
// Any 5xx answer fails the test: bad input must never cause one. Every
// answer is checked against openapi/openapi.yaml; a mismatch fails the test.
func (e *testEnv) do(method, path, role string, body any) reply {
	e.t.Helper()
	auth := ""
	if role != "" {
		auth = "Bearer " + e.tokens[role]
	}
	return e.doAuth(method, path, auth, body)
}

// doAuth is do with a raw Authorization header ("" sends none).
func (e *testEnv) doAuth(method, path, auth string, body any) reply {
	e.t.Helper()
	var rd io.Reader
	switch b := body.(type) {
	case nil:
	case string:
		rd = strings.NewReader(b)
	case []byte:
		rd = bytes.NewReader(b)
	default:
		js, err := json.Marshal(b)
		if err != nil {
			e.t.Fatalf("marshal request body: %v", err)
		}
		rd = bytes.NewReader(js)
	}
	ctype := ""
	if rd != nil {
		ctype = "application/json"
	}
	return e.sendTyped(method, path, auth, ctype, rd)
}

// doType sends body as is with the given Content-Type, as the user holding
// role, with the checks of do.
func (e *testEnv) doType(method, path, role, ctype, body string) reply {
	e.t.Helper()
	return e.sendTyped(method, path, "Bearer "+e.tokens[role], ctype, strings.NewReader(body))
}

// sendTyped is doAuth's request with its Content-Type ("" sends none).
func (e *testEnv) sendTyped(method, path, auth, ctype string, rd io.Reader) reply {
	e.t.Helper()
	req, err := http.NewRequest(method, e.url+path, rd)
	if err != nil {
		e.t.Fatal(err)
	}
	if ctype != "" {
		req.Header.Set("Content-Type", ctype)
	}
	if auth != "" {
		req.Header.Set("Authorization", auth)
	}
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		e.t.Fatalf("%s %s: %v", method, path, err)
	}
	defer res.Body.Close()
	b, err := io.ReadAll(res.Body)
	if err != nil {
		e.t.Fatalf("%s %s: read body: %v", method, path, err)
	}
	r := reply{status: res.StatusCode, header: res.Header, body: b}
	if err := spectest.Default.Check(req, r.status, r.header, b); err != nil {
		e.t.Errorf("answer does not match the spec: %v (body %.300s)", err, b)
	}
	if r.status >= 500 {
		e.t.Errorf("%s %s = %d %s, want no server error", method, path, r.status, b)
	}
	if r.status >= 400 {
		if m := serverWords.Find(b); m != nil {
			e.t.Errorf("%s %s = %d speaks the server's words (%q), want the user's (DEVELOPERS.md, Conventions): %s", method, path, r.status, m, b)
		}
	}
	return r
}

// serverWords are package prefixes, constraint names and SQLSTATEs: no
// refusal may carry them (convention "errors in the user's words").
var serverWords = regexp.MustCompile(`\b(?:db|api|predict|pgx|pgconn|openapi3filter): |\b[a-z_]+_(?:key|check|fkey|pkey)\b|SQLSTATE|\b(?:23505|23514|23503|22021|22P02)\b`)

// object decodes a JSON object answer.
func (r reply) object(tb testing.TB) map[string]any {
	tb.Helper()
	var m map[string]any
	if err := json.Unmarshal(r.body, &m); err != nil {
		tb.Fatalf("answer %d is not a JSON object: %v: %s", r.status, err, r.body)
	}
	return m
}

// items decodes a list answer's items.
func (r reply) items(tb testing.TB) []map[string]any {
	tb.Helper()
	var page struct {
		Items []map[string]any `json:"items"`
	}
	if err := json.Unmarshal(r.body, &page); err != nil {
		tb.Fatalf("answer %d is not a list: %v: %s", r.status, err, r.body)
	}
	return page.Items
}

// create posts body and fails the test unless the answer is 201; it returns the stored record.
func (e *testEnv) create(path, role string, body any) map[string]any {
	e.t.Helper()
	r := e.do(http.MethodPost, path, role, body)
	if r.status != http.StatusCreated {
		e.t.Fatalf("POST %s = %d %s, want 201", path, r.status, r.body)
	}
	return r.object(e.t)
}

// wantProblem checks that r is an RFC 9457 problem with the given status that
// names field among its errors (field "" checks only the status and shape).
func wantProblem(tb testing.TB, what string, r reply, status int, field string) api.Problem {
	tb.Helper()
	if r.status != status {
		tb.Errorf("%s: status = %d, want %d (body %s)", what, r.status, status, r.body)
	}
	if ct := r.header.Get("Content-Type"); ct != "application/problem+json" {
		tb.Errorf("%s: Content-Type = %q, want application/problem+json", what, ct)
	}
	var p api.Problem
	if err := json.Unmarshal(r.body, &p); err != nil {
		tb.Errorf("%s: body is not a problem: %v: %s", what, err, r.body)
		return p
	}
	if p.Status != r.status || p.Title == "" || p.Type == "" {
		tb.Errorf("%s: problem = status %d title %q type %q, want status %d and a title and type", what, p.Status, p.Title, p.Type, r.status)
	}
	if field != "" && !names(p, field) {
		tb.Errorf("%s: problem errors = %+v, want one naming %q with a reason", what, p.Errors, field)
	}
	return p
}

// names reports whether the problem names field with a reason.
func names(p api.Problem, field string) bool {
	for _, is := range p.Errors {
		if is.Field == field && is.Reason != "" {
			return true
		}
	}
	return false
}

// contains reports whether s contains sub.
func contains(s, sub string) bool { return strings.Contains(s, sub) }

// normalizeJSON renders v as JSON for case names.
func normalizeJSON(v any) []byte {
	b, _ := json.Marshal(v)
	return b
}
