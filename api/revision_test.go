package api_test

import (
	"net/http"
	"testing"

	"github.com/google/go-cmp/cmp"
)

// changedField is a field each kind's correction changes, with its new value (a fixture).
var changedField = map[string]struct {
	field string
	value any
}{
	"Procedure":           {"title", "Fillet welds, carbon steel, short circuit, revised"},
	"QualificationRecord": {"current_a", 285.0},
	"Coupon":              {"voltage_v", 21.5},
	"Measurement":         {"penetration_mm", 1.9},
}

// TestRevisions corrects and then voids each kind of record through HTTP
// and checks that every revision stays readable, lists show only the
// current one, and the audit chain records who did what and why.
func TestRevisions(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, k := range inputKinds() {
		t.Run(k.name, func(t *testing.T) {
			body := k.body(e)
			rev1 := e.create(k.path(e), k.role, body)
			id := rev1["id"].(string)
			p := k.read + "/" + id
			ch := changedField[k.name]
			fixed := withRevision(body, 1, "value re-read from the log")
			fixed[ch.field] = ch.value
			r := e.do(http.MethodPut, p, "engineer", fixed)
			if r.status != http.StatusOK {
				t.Fatalf("PUT %s = %d %s, want 200", p, r.status, r.body)
			}
			rev2 := r.object(t)
			want := clone(rev1)
			want[ch.field], want["revision"], want["created_by"] = ch.value, 2.0, userName("engineer")
			want["reason"], want["created_at"] = "value re-read from the log", rev2["created_at"]
			if d := cmp.Diff(want, rev2); d != "" {
				t.Errorf("correction answer (-want +got):\n%s", d)
			}
			if d := cmp.Diff(rev2, e.do(http.MethodGet, p, "auditor", nil).object(t)); d != "" {
				t.Errorf("GET %s after the correction (-want +got):\n%s", p, d)
			}
			if d := cmp.Diff(rev1, e.do(http.MethodGet, p+"?revision=1", "auditor", nil).object(t)); d != "" {
				t.Errorf("GET %s?revision=1 (-want +got):\n%s", p, d)
			}
			r = e.do(http.MethodPost, p+"/void", k.role, map[string]any{"base_revision": 2, "reason": "section cut from the wrong coupon"})
			if r.status != http.StatusOK {
				t.Fatalf("void %s = %d %s, want 200", p, r.status, r.body)
			}
			rev3 := r.object(t)
			want = clone(rev2)
			want["revision"], want["voided"], want["created_by"] = 3.0, true, userName(k.role)
			want["reason"], want["created_at"] = "section cut from the wrong coupon", rev3["created_at"]
			if d := cmp.Diff(want, rev3); d != "" {
				t.Errorf("void answer: the values must be kept (-want +got):\n%s", d)
			}
			if d := cmp.Diff([]map[string]any{rev1, rev2, rev3}, e.do(http.MethodGet, p+"/revisions", "auditor", nil).items(t)); d != "" {
				t.Errorf("GET %s/revisions (-want +got):\n%s", p, d)
			}
			for _, c := range []struct {
				query  string
				listed bool
			}{{"", false}, {"&include_voided=false", false}, {"&include_voided=true", true}} {
				listed := false
				for _, it := range e.do(http.MethodGet, k.read+"?limit=500"+c.query, "auditor", nil).items(t) {
					listed = listed || it["id"] == id
				}
				if listed != c.listed {
					t.Errorf("GET %s?limit=500%s lists the voided record: %v, want %v", k.read, c.query, listed, c.listed)
				}
			}
			checkAuditTrail(t, e, id, []string{"create", "correct", "void"},
				[]string{"", "value re-read from the log", "section cut from the wrong coupon"},
				[]string{userName(k.role), userName("engineer"), userName(k.role)})
		})
	}
	if v := e.do(http.MethodGet, "/v1/audit/verify", "auditor", nil).object(t); v["ok"] != true {
		t.Errorf("GET /v1/audit/verify = %v, want ok", v)
	}
}

// checkAuditTrail compares a record's log entries with the actions,
// reasons and actors expected, in order, with revisions 1, 2, 3..., and
// checks each revision's inclusion proof against the signed checkpoint's
// root with the RFC 9162 verifier of github.com/transparency-dev/merkle.
func checkAuditTrail(t *testing.T, e *testEnv, id string, actions, reasons, actors []string) {
	t.Helper()
	var got, want []map[string]any
	for _, ev := range e.do(http.MethodGet, "/v1/audit/events?entity_id="+id, "auditor", nil).items(t) {
		got = append(got, map[string]any{"action": ev["action"], "reason": ev["reason"], "actor": ev["actor"],
			"revision": ev["revision"], "proved_revision": provedRevision(t, e, ev)})
	}
	for i := range actions {
		rev := float64(i + 1)
		want = append(want, map[string]any{"action": actions[i], "reason": reasons[i], "actor": actors[i],
			"revision": rev, "proved_revision": rev})
	}
	if d := cmp.Diff(want, got); d != "" {
		t.Errorf("audit events of %s (-want +got):\n%s", id, d)
	}
}
