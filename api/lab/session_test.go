package lab_test

import (
	"context"
	"crypto/sha256"
	"encoding/base64"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/api"
	"etchlog/db/dbtest"
)

// TestSignInCookie checks the session cookie's attributes and that the
// database keeps only the SHA-256 of the session id.
func TestSignInCookie(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	f := e.signedIn("technician")
	u, _ := url.Parse(e.url + "/lab/")
	var ses *http.Cookie
	for _, c := range f.client.Jar.Cookies(u) {
		if c.Name == "etchlog_session" {
			ses = c
		}
	}
	if ses == nil {
		t.Fatal("no etchlog_session cookie after signing in")
	}
	// The jar drops attributes, so read them from a fresh sign-in's header.
	_, page := f.get("/lab/sign-in")
	res, err := f.client.PostForm(e.url+"/lab/sign-in", url.Values{"form_token": {formToken(t, page)}, "token": {e.tokens["auditor"]}})
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	var set *http.Cookie
	for _, c := range res.Cookies() {
		if c.Name == "etchlog_session" {
			set = c
		}
	}
	if set == nil || !set.HttpOnly || set.SameSite != http.SameSiteStrictMode || set.Path != "/lab" || set.Secure {
		t.Errorf("session cookie %+v: want HttpOnly, SameSite=Strict, Path /lab, not Secure over plain HTTP", set)
	}
	raw, err := base64.RawURLEncoding.DecodeString(set.Value)
	if err != nil || len(raw) != 32 {
		t.Errorf("session id %q: want 32 random bytes (256 bits) in base64url, got %d bytes (%v)", set.Value, len(raw), err)
	}
	conn, err := pgx.Connect(context.Background(), dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(context.Background())
	digest := sha256.Sum256([]byte(set.Value))
	var hashed, plain int
	if err := conn.QueryRow(context.Background(), `SELECT count(*) FILTER (WHERE id_sha256 = $1),
		count(*) FILTER (WHERE position(convert_to($2, 'UTF8') IN id_sha256) > 0) FROM lab_sessions`, digest[:], set.Value).Scan(&hashed, &plain); err != nil {
		t.Fatal(err)
	}
	if hashed != 1 || plain != 0 {
		t.Errorf("lab_sessions holds the id's SHA-256 %d times and the raw id %d times, want 1 and 0", hashed, plain)
	}
}

// TestFormTokenRequired checks every write needs the session's form token
// (synchronizer token): without it, or with another session's, the server
// refuses with 403 and changes nothing.
func TestFormTokenRequired(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	tech, other := e.signedIn("technician"), e.signedIn("technician")
	_, page := tech.get("/lab/")
	mine := formToken(t, page)
	_, otherPage := other.get("/lab/")
	for _, c := range []struct {
		name, token string
		want        int
	}{
		{"missing", "", http.StatusForbidden},
		{"wrong", "not-the-token", http.StatusForbidden},
		{"another session's", formToken(t, otherPage), http.StatusForbidden},
		{"this session's", mine, http.StatusSeeOther},
	} {
		res := tech.post("/lab/units", url.Values{"form_token": {c.token}, "units": {"inch-pound"}, "back": {"/lab/"}})
		if res.StatusCode != c.want {
			t.Errorf("units form with the %s token = %d, want %d", c.name, res.StatusCode, c.want)
		}
		if c.want == http.StatusForbidden {
			for _, ck := range res.Cookies() {
				if ck.Name == "etchlog_units" {
					t.Errorf("units form with the %s token set the units cookie", c.name)
				}
			}
		}
	}
	if res := tech.post("/lab/sign-out", url.Values{}); res.StatusCode != http.StatusForbidden {
		t.Errorf("sign-out without the form token = %d, want 403", res.StatusCode)
	}
	if res, _ := tech.get("/lab/"); res.StatusCode != http.StatusOK {
		t.Errorf("after a refused sign-out the start page = %d, want 200 (still signed in)", res.StatusCode)
	}
	if res := tech.post("/lab/sign-in", url.Values{"token": {e.tokens["engineer"]}}); res.StatusCode != http.StatusForbidden {
		t.Errorf("sign-in without its form token = %d, want 403", res.StatusCode)
	}
}

// TestSignOutEndsSession checks a signed-out session is refused, also by
// another server process on the same database.
func TestSignOutEndsSession(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	f := e.signedIn("engineer")
	_, page := f.get("/lab/")
	u, _ := url.Parse(e.url + "/lab/")
	cookies := f.client.Jar.Cookies(u)
	if res := f.post("/lab/sign-out", url.Values{"form_token": {formToken(t, page)}}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("sign out = %d, want 303", res.StatusCode)
	}
	res, _ := f.get("/lab/")
	if res.StatusCode != http.StatusSeeOther || !strings.HasPrefix(res.Header.Get("Location"), "/lab/sign-in") {
		t.Errorf("start page after signing out = %d to %q, want 303 to the sign-in page", res.StatusCode, res.Header.Get("Location"))
	}
	// A second process on the same database, given the old cookie.
	srv, err := api.New(e.store, api.Options{Logger: slog.New(slog.NewTextHandler(testWriter{t}, &slog.HandlerOptions{Level: slog.LevelError}))})
	if err != nil {
		t.Fatal(err)
	}
	second := httptest.NewServer(srv)
	defer second.Close()
	req, _ := http.NewRequest(http.MethodGet, second.URL+"/lab/", nil)
	for _, c := range cookies {
		req.AddCookie(c)
	}
	res, err = (&http.Client{CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}).Do(req)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther {
		t.Errorf("another process given the signed-out cookie = %d, want 303 to sign in", res.StatusCode)
	}
}

// TestSignInRefusesUnknownToken checks a wrong token gets words, not a session.
func TestSignInRefusesUnknownToken(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	f := e.signedIn("auditor")
	_, page := f.get("/lab/sign-in")
	res, err := f.client.PostForm(e.url+"/lab/sign-in", url.Values{"form_token": {formToken(t, page)}, "token": {"not-a-token-of-this-site"}})
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	if res.StatusCode != http.StatusUnauthorized {
		t.Errorf("sign-in with an unknown token = %d, want 401", res.StatusCode)
	}
	contains(t, "the refused sign-in page", string(b), "not known here")
}

// TestAPIKeepsBearerTokens checks a session cookie does not open the JSON
// API: only a bearer token does (the pages' own calls are in process).
func TestAPIKeepsBearerTokens(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	e.call(http.MethodGet, "/v1/coupons", "technician", nil, http.StatusOK)
	f := e.signedIn("technician")
	u, _ := url.Parse(e.url + "/lab/")
	req, _ := http.NewRequest(http.MethodGet, e.url+"/v1/coupons", nil)
	for _, c := range f.client.Jar.Cookies(u) { // sent by hand: the cookie's path is /lab
		req.AddCookie(c)
	}
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if len(req.Cookies()) == 0 || res.StatusCode != http.StatusUnauthorized {
		t.Errorf("GET /v1/coupons with a session cookie and no token = %d, want 401", res.StatusCode)
	}
}
