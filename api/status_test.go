package api_test

import (
	"net/http"
	"testing"

	"github.com/google/uuid"
)

// TestNotFound reads, corrects, voids and lists revisions of records that do
// not exist, or exist only at another site: 404 problem.
func TestNotFound(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	other := newEnv(t) // another site on the same database
	for _, k := range inputKinds() {
		mine := e.create(k.path(e), k.role, k.body(e))["id"].(string)
		theirs := other.create(k.path(other), k.role, k.body(other))["id"].(string)
		for _, c := range []struct{ name, id, query string }{
			{"Unknown", uuid.NewString(), ""},
			{"OtherSite", theirs, ""},
			{"NoSuchRevision", mine, "?revision=2"},
		} {
			t.Run(k.name+"/"+c.name, func(t *testing.T) {
				p := k.read + "/" + c.id
				wantProblem(t, "GET "+p+c.query, e.do(http.MethodGet, p+c.query, "auditor", nil), http.StatusNotFound, "")
				if c.query != "" {
					return
				}
				wantProblem(t, "GET revisions", e.do(http.MethodGet, p+"/revisions", "auditor", nil), http.StatusNotFound, "")
				wantProblem(t, "PUT", e.do(http.MethodPut, p, k.role, withRevision(k.body(e), 1, "typo")), http.StatusNotFound, "")
				wantProblem(t, "void", e.do(http.MethodPost, p+"/void", k.role, map[string]any{"base_revision": 1, "reason": "typo"}), http.StatusNotFound, "")
			})
		}
	}
	// The other site's records are untouched by these attempts.
	if v := other.do(http.MethodGet, "/v1/audit/verify", "auditor", nil).object(t); v["ok"] != true {
		t.Errorf("other site's audit after the attempts: %v, want ok", v)
	}
}

// TestConflict checks the 409 answers: a stale base revision, a duplicate
// coupon mark, procedure code or record number, and a voided record.
func TestConflict(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, k := range inputKinds() {
		t.Run(k.name, func(t *testing.T) {
			body := k.body(e)
			id := e.create(k.path(e), k.role, body)["id"].(string)
			p := k.read + "/" + id
			if r := e.do(http.MethodPut, p, k.role, withRevision(body, 1, "first fix")); r.status != http.StatusOK {
				t.Fatalf("PUT %s base 1 = %d %s, want 200", p, r.status, r.body)
			}
			for _, base := range []int{1, 3} {
				r := e.do(http.MethodPut, p, k.role, withRevision(body, base, "second fix"))
				wantProblem(t, "correction on base revision "+string(normalizeJSON(base)), r, http.StatusConflict, "")
				r = e.do(http.MethodPost, p+"/void", k.role, map[string]any{"base_revision": base, "reason": "void"})
				wantProblem(t, "void on stale base revision", r, http.StatusConflict, "")
			}
			if r := e.do(http.MethodPost, p+"/void", k.role, map[string]any{"base_revision": 2, "reason": "wrong plate"}); r.status != http.StatusOK {
				t.Fatalf("void base 2 = %d %s, want 200", r.status, r.body)
			}
			r := e.do(http.MethodPut, p, k.role, withRevision(body, 3, "fix after void"))
			wantProblem(t, "correcting a voided record", r, http.StatusConflict, "")
			r = e.do(http.MethodPost, p+"/void", k.role, map[string]any{"base_revision": 3, "reason": "again"})
			wantProblem(t, "voiding a voided record", r, http.StatusConflict, "")
		})
	}
	for _, c := range []struct{ kind, field string }{
		{"Coupon", "coupon_mark"}, {"Procedure", "code"}, {"QualificationRecord", "record_number"},
	} {
		t.Run("Duplicate/"+c.field, func(t *testing.T) {
			k := kindNamed(c.kind)
			b := k.body(e)
			first := e.create(k.path(e), k.role, b)
			wantProblem(t, "second "+c.field, e.do(http.MethodPost, k.path(e), k.role, b), http.StatusConflict, "")
			// Still a duplicate once the first is voided: marks are never reused.
			e.do(http.MethodPost, k.read+"/"+first["id"].(string)+"/void", k.role, map[string]any{"base_revision": 1, "reason": "test"})
			wantProblem(t, c.field+" of a voided record", e.do(http.MethodPost, k.path(e), k.role, b), http.StatusConflict, "")
		})
	}
}

// TestChangeFields checks that a correction needs a base revision and a
// reason (422 naming it) and that a new record must not carry them (400).
func TestChangeFields(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, k := range inputKinds() {
		body := k.body(e)
		p := k.read + "/" + e.create(k.path(e), k.role, body)["id"].(string)
		for _, c := range []struct {
			name   string
			method string
			path   string
			body   map[string]any
			status int
			field  string
		}{
			{"CorrectNoReason", http.MethodPut, p, map[string]any{"base_revision": 1}, http.StatusBadRequest, "reason"},
			{"CorrectEmptyReason", http.MethodPut, p, map[string]any{"base_revision": 1, "reason": ""}, http.StatusUnprocessableEntity, "reason"},
			{"CorrectBlankReason", http.MethodPut, p, map[string]any{"base_revision": 1, "reason": "  \t"}, http.StatusUnprocessableEntity, "reason"},
			{"CorrectNoBase", http.MethodPut, p, map[string]any{"reason": "typo"}, http.StatusBadRequest, "base_revision"},
			{"CorrectBaseZero", http.MethodPut, p, map[string]any{"base_revision": 0, "reason": "typo"}, http.StatusUnprocessableEntity, "base_revision"},
			{"VoidNoReason", http.MethodPost, p + "/void", map[string]any{"base_revision": 1}, http.StatusBadRequest, "reason"},
			{"VoidEmptyReason", http.MethodPost, p + "/void", map[string]any{"base_revision": 1, "reason": ""}, http.StatusUnprocessableEntity, "reason"},
			{"VoidBlankReason", http.MethodPost, p + "/void", map[string]any{"base_revision": 1, "reason": " "}, http.StatusUnprocessableEntity, "reason"},
			{"VoidNoBase", http.MethodPost, p + "/void", map[string]any{"reason": "typo"}, http.StatusBadRequest, "base_revision"},
			{"CreateWithBase", http.MethodPost, k.path(e), map[string]any{"base_revision": 1}, http.StatusBadRequest, "base_revision"},
			{"CreateWithReason", http.MethodPost, k.path(e), map[string]any{"reason": "new"}, http.StatusBadRequest, "reason"},
		} {
			t.Run(k.name+"/"+c.name, func(t *testing.T) {
				var b map[string]any
				switch {
				case c.method == http.MethodPut:
					b = clone(body) // the record as created, plus the change fields
				case c.path == k.path(e):
					b = k.body(e) // a valid new record apart from the change fields
				default:
					b = map[string]any{} // a void takes only the change fields
				}
				for f, v := range c.body {
					b[f] = v
				}
				wantProblem(t, c.name, e.do(c.method, c.path, k.role, b), c.status, c.field)
			})
		}
		if rev := e.do(http.MethodGet, p, "auditor", nil).object(t)["revision"]; rev != 1.0 {
			t.Errorf("%s revision = %v after refused changes, want 1", p, rev)
		}
	}
	t.Run("ProcedureCodeChange", func(t *testing.T) {
		b := procedureBody(uniq("WPS"))
		p := "/v1/procedures/" + e.create("/v1/procedures", "engineer", b)["id"].(string)
		b["code"] = uniq("WPS")
		wantProblem(t, "new code in a correction", e.do(http.MethodPut, p, "engineer", withRevision(b, 1, "renumber")), http.StatusUnprocessableEntity, "code")
	})
}
