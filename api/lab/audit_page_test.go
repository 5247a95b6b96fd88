package lab_test

import (
	"net/http"
	"strings"
	"testing"
)

// TestAuditPages checks the auditor's routes over HTTP: the roles that may
// open them, the start page's links, and that a download passes the API's
// file through while a refusal becomes an error page in words.
func TestAuditPages(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newAuditShop(e)
	if res, _ := e.signedIn("technician").get("/lab/audit"); res.StatusCode != http.StatusForbidden {
		t.Errorf("a technician opens /lab/audit: %d, want 403", res.StatusCode)
	}
	f := e.signedIn("auditor")
	res, page := f.get("/lab/audit")
	if res.StatusCode != http.StatusOK {
		t.Fatalf("/lab/audit = %d", res.StatusCode)
	}
	contains(t, "the audit page", page, `href="/lab/audit/procedures/`+shop.proc+`"`, `href="/lab/audit/csv/coupons?include_voided=true"`)
	res, body := f.get("/lab/audit/csv/procedures?include_voided=true")
	if ct := res.Header.Get("Content-Type"); res.StatusCode != http.StatusOK || !strings.HasPrefix(ct, "text/csv") ||
		!strings.HasPrefix(body, "\ufeff") || !strings.Contains(body, shop.code) {
		t.Errorf("procedures CSV = %d %q %.80q, want text/csv with the byte-order mark and %s", res.StatusCode, ct, body, shop.code)
	}
	for _, c := range []struct {
		path   string
		status int
		words  string
	}{
		{"/lab/audit/csv/passwords", http.StatusNotFound, "No such list"},
		{"/lab/audit/revisions/users/" + shop.proc, http.StatusNotFound, "No such record"},
		{"/lab/audit/printed/01a2b3c4-0000-7000-8000-000000000000", http.StatusNotFound, ""},
		{"/lab/audit/csv/coupons?procedure_id=not-an-id", http.StatusBadRequest, "procedure_id"},
	} {
		res, page := f.get(c.path)
		if res.StatusCode != c.status || !strings.HasPrefix(res.Header.Get("Content-Type"), "text/html") || !strings.Contains(page, c.words) {
			t.Errorf("GET %s = %d %q, want an error page %d saying %q:\n%.400s", c.path, res.StatusCode, res.Header.Get("Content-Type"), c.status, c.words, page)
		}
	}
}
