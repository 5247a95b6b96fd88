package lab_test

import (
	"bytes"
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"os"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"etchlog/api"
	"etchlog/db"
	"etchlog/db/dbtest"
)

// labEnv is a real etchlog server (API and lab pages) on a fresh site of
// the package's test database, with one user per role.
type labEnv struct {
	t      testing.TB
	url    string
	site   string
	store  *db.Store
	tokens map[string]string // role → bearer token
}

// newLabEnv starts the server for one test.
func newLabEnv(tb testing.TB) *labEnv {
	tb.Helper()
	store := dbtest.Store(tb)
	log := slog.New(slog.NewTextHandler(testWriter{tb}, &slog.HandlerOptions{Level: slog.LevelError}))
	srv, err := api.New(store, api.Options{Logger: log})
	if err != nil {
		tb.Fatalf("api.New: %v", err)
	}
	ts := httptest.NewServer(srv)
	tb.Cleanup(ts.Close)
	e := &labEnv{t: tb, url: ts.URL, site: dbtest.Site(tb), store: store, tokens: map[string]string{}}
	for _, role := range []string{db.RoleTechnician, db.RoleEngineer, db.RoleAuditor} {
		tok, err := db.NewToken()
		if err != nil {
			tb.Fatal(err)
		}
		if err := dbtest.Owner(tb).PutUser(context.Background(), db.User{Site: e.site, Name: "lab-" + role, Role: role}, tok); err != nil {
			tb.Fatalf("PutUser(%s): %v", role, err)
		}
		e.tokens[role] = tok
	}
	return e
}

// testWriter sends the server's error log to the test log.
type testWriter struct{ tb testing.TB }

func (w testWriter) Write(p []byte) (int, error) {
	w.tb.Logf("server log: %s", bytes.TrimSpace(p))
	return len(p), nil
}

// call sends a JSON request to the API with role's bearer token and
// decodes the answer (nil for an empty one); it fails the test on a status
// other than want.
func (e *labEnv) call(method, path, role string, body any, want int) map[string]any {
	e.t.Helper()
	var rd io.Reader
	if body != nil {
		b, _ := json.Marshal(body)
		rd = bytes.NewReader(b)
	}
	req, _ := http.NewRequest(method, e.url+path, rd)
	req.Header.Set("Authorization", "Bearer "+e.tokens[role])
	if body != nil {
		req.Header.Set("Content-Type", "application/json")
	}
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		e.t.Fatalf("%s %s: %v", method, path, err)
	}
	defer res.Body.Close()
	raw, _ := io.ReadAll(res.Body)
	if res.StatusCode != want {
		e.t.Fatalf("%s %s = %d, want %d: %s", method, path, res.StatusCode, want, raw)
	}
	var out map[string]any
	if len(bytes.TrimSpace(raw)) > 0 {
		_ = json.Unmarshal(raw, &out)
	}
	return out
}

// form is a signed-in browser without a browser: a cookie jar that follows
// no redirects, for checking what the server answers to forms.
type form struct {
	e      *labEnv
	client *http.Client
}

// signedIn signs role in over HTTP (the sign-in form, with its own form
// token) and returns the client holding the session cookie.
func (e *labEnv) signedIn(role string) *form {
	e.t.Helper()
	jar, _ := cookiejar.New(nil)
	f := &form{e: e, client: &http.Client{Jar: jar, CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}}
	_, page := f.get("/lab/sign-in")
	res := f.post("/lab/sign-in", url.Values{"form_token": {formToken(e.t, page)}, "token": {e.tokens[role]}, "next": {"/lab/"}})
	if res.StatusCode != http.StatusSeeOther {
		e.t.Fatalf("sign in as %s = %d, want 303", role, res.StatusCode)
	}
	return f
}

// get reads a page (following no redirect).
func (f *form) get(path string) (*http.Response, string) {
	f.e.t.Helper()
	res, err := f.client.Get(f.e.url + path)
	if err != nil {
		f.e.t.Fatalf("GET %s: %v", path, err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res, string(b)
}

// post sends a form (following no redirect).
func (f *form) post(path string, v url.Values) *http.Response {
	f.e.t.Helper()
	res, err := f.client.PostForm(f.e.url+path, v)
	if err != nil {
		f.e.t.Fatalf("POST %s: %v", path, err)
	}
	_, _ = io.Copy(io.Discard, res.Body)
	res.Body.Close()
	return res
}

// answer is a page answer read whole.
type answer struct {
	status         int
	body, location string
}

// postPage sends a form and reads the answer (following no redirect).
func (f *form) postPage(path string, v url.Values) answer {
	f.e.t.Helper()
	res, err := f.client.PostForm(f.e.url+path, v)
	if err != nil {
		f.e.t.Fatalf("POST %s: %v", path, err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return answer{status: res.StatusCode, body: string(b), location: res.Header.Get("Location")}
}

var formTokenRE = regexp.MustCompile(`name="form_token" value="([^"]+)"`)

// formToken finds the form token of a page.
func formToken(tb testing.TB, page string) string {
	tb.Helper()
	m := formTokenRE.FindStringSubmatch(page)
	if m == nil {
		tb.Fatalf("no form token on the page:\n%s", page)
	}
	return m[1]
}

// chromiumPath is where the browser tests expect Chromium (bash .ci/setup installs it there).
const chromiumPath = "/usr/bin/chromium"

// browser starts a headless Chromium with a fresh profile for one test,
// with a window of width × 900 CSS pixels. It skips without Chromium on a
// laptop but fails when CI is set.
func browser(t *testing.T, width int) context.Context {
	t.Helper()
	if _, err := os.Stat(chromiumPath); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("no Chromium at %s (%v); CI is set, so the browser test must run", chromiumPath, err)
		}
		t.Skipf("no Chromium at %s (%v): run bash .ci/setup to install it and run the browser test", chromiumPath, err)
	}
	profile := t.TempDir() // removed after the browser below has exited
	alloc, cancelAlloc := chromedp.NewExecAllocator(context.Background(),
		chromedp.ExecPath(chromiumPath), chromedp.Flag("headless", true), chromedp.NoSandbox,
		chromedp.DisableGPU, chromedp.Flag("disable-quic", true), chromedp.NoFirstRun,
		chromedp.Flag("disable-background-networking", true), chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true), chromedp.UserDataDir(profile), chromedp.WindowSize(width, 900))
	ctx, cancelCtx := chromedp.NewContext(alloc)
	ctx, cancelTimeout := context.WithTimeout(ctx, 90*time.Second)
	t.Cleanup(func() { cancelTimeout(); cancelCtx(); cancelAlloc() })
	// A headless window keeps a minimum width of its own (about 500 px), so
	// the page's viewport is set exactly.
	if err := chromedp.Do(ctx, chromedp.EmulateViewport(int64(width), 900)); err != nil {
		t.Fatalf("set the viewport to %d px: %v", width, err)
	}
	return ctx
}

// signIn signs role in through the sign-in page in the browser and waits
// for the start page.
func (e *labEnv) signIn(t *testing.T, ctx context.Context, role string) {
	t.Helper()
	if err := chromedp.Do(ctx,
		chromedp.Navigate(e.url+"/lab/"),
		chromedp.WaitVisible(chromedp.ID("token")),
		chromedp.SendKeys(chromedp.ID("token"), e.tokens[role]),
		chromedp.Click(chromedp.ID("sign-in")),
		chromedp.WaitVisible(chromedp.ID("sign-out")),
	); err != nil {
		t.Fatalf("sign in as %s: %v", role, err)
	}
}

// overflows reports whether the page is wider than the window (a page that
// scrolls sideways); wide tables must scroll inside their own box.
func overflows(t *testing.T, ctx context.Context) bool {
	t.Helper()
	wide, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`document.documentElement.scrollWidth > document.documentElement.clientWidth`))
	if err != nil {
		t.Fatal(err)
	}
	return wide
}

// unlabelled lists the inputs, selects and text areas of the page that no
// label names (hidden inputs and buttons need none).
func unlabelled(t *testing.T, ctx context.Context) []string {
	t.Helper()
	ids, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('input:not([type=hidden]):not([type=submit]), select, textarea'))
		.filter(el => !(el.labels && el.labels.length > 0 && Array.from(el.labels).some(l => l.textContent.trim() !== '')) && !el.getAttribute('aria-label'))
		.map(el => el.id || el.name)`))
	if err != nil {
		t.Fatal(err)
	}
	return ids
}

// contains fails unless s holds every word.
func contains(t *testing.T, what, s string, words ...string) {
	t.Helper()
	for _, w := range words {
		if !strings.Contains(s, w) {
			t.Errorf("%s does not contain %q:\n%s", what, w, s)
		}
	}
}
