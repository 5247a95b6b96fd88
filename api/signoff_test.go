package api_test

import (
	"net/http"
	"testing"
)

// TestSignOffHTTP: engineers sign off a PQR, a procedure and a calibration
// (201, Location); technicians and auditors get 403; the sign-off's hash is
// the leaf hash of the signed revision in the log; reads, lists and the
// revisions show the state; a correction shows unsigned; a stale revision is
// 409 and a statement left out 400 or empty 422.
func TestSignOffHTTP(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(6, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	for _, k := range []struct{ name, path, id string }{
		{"QualificationRecord", "/v1/qualification-records", e.mustQualificationRecord()},
		{"Procedure", "/v1/procedures", e.mustProcedure()},
		{"Calibration", "/v1/calibrations", cal.ID},
	} {
		t.Run(k.name, func(t *testing.T) {
			rec := k.path + "/" + k.id
			body := map[string]any{"revision": 1, "statement": "Reviewed against the code of record; accepted."}
			for _, role := range []string{"technician", "auditor"} {
				wantProblem(t, role+" signs", e.do(http.MethodPost, rec+"/sign-off", role, body), http.StatusForbidden, "")
			}
			wantProblem(t, "no statement", e.do(http.MethodPost, rec+"/sign-off", "engineer", map[string]any{"revision": 1}), http.StatusBadRequest, "statement")
			wantProblem(t, "empty statement", e.do(http.MethodPost, rec+"/sign-off", "engineer", map[string]any{"revision": 1, "statement": ""}), http.StatusUnprocessableEntity, "statement")
			if got := e.do(http.MethodGet, rec, "auditor", nil).object(t); got["sign_off"] != nil {
				t.Errorf("GET %s before signing: sign_off = %v, want null", rec, got["sign_off"])
			}
			r := e.do(http.MethodPost, rec+"/sign-off", "engineer", body)
			so := r.object(t)
			if r.status != http.StatusCreated || r.header.Get("Location") != "/v1/sign-offs/"+so["id"].(string) {
				t.Fatalf("sign-off = %d %s (Location %q), want 201 located on the sign-off", r.status, r.body, r.header.Get("Location"))
			}
			if so["signed_by"] != userName("engineer") || so["record_id"] != k.id || so["record_revision"] != 1.0 || so["statement"] != body["statement"] {
				t.Errorf("sign-off = %v", so)
			}
			ev := e.do(http.MethodGet, "/v1/audit/events?entity_id="+k.id, "auditor", nil).items(t)
			if len(ev) == 0 || ev[0]["revision"] != 1.0 || ev[0]["leaf_hash"] != so["signed_hash"] || so["signed_hash_of"] != "log_leaf" {
				t.Errorf("signed_hash %v, want the leaf hash of revision 1 in the log %v", so["signed_hash"], ev)
			}
			if got := e.do(http.MethodGet, rec, "auditor", nil).object(t)["sign_off"]; got == nil || got.(map[string]any)["id"] != so["id"] {
				t.Errorf("GET %s after signing: sign_off = %v, want %v", rec, got, so["id"])
			}
			listed := false
			for _, it := range e.do(http.MethodGet, k.path+"?limit=500", "auditor", nil).items(t) {
				if it["id"] == k.id {
					listed = it["sign_off"] != nil
				}
			}
			if !listed {
				t.Errorf("GET %s: the record is not listed with its sign-off", k.path)
			}
			if got := e.do(http.MethodGet, "/v1/sign-offs/"+so["id"].(string), "technician", nil).object(t); got["id"] != so["id"] {
				t.Errorf("GET /v1/sign-offs/{id} = %v", got)
			}
			if items := e.do(http.MethodGet, "/v1/sign-offs?record_id="+k.id, "auditor", nil).items(t); len(items) != 1 {
				t.Errorf("GET /v1/sign-offs?record_id= lists %d, want 1", len(items))
			}
			p := wantProblem(t, "signing twice", e.do(http.MethodPost, rec+"/sign-off", "engineer", body), http.StatusConflict, "revision")
			if p.ExistingID != so["id"] {
				t.Errorf("signing twice: existing_id %q, want %v", p.ExistingID, so["id"])
			}
		})
	}
	t.Run("CorrectionIsUnsigned", func(t *testing.T) {
		num := uniq("PQR")
		id := e.create("/v1/qualification-records", "engineer", qualificationRecordBody(num))["id"].(string)
		rec := "/v1/qualification-records/" + id
		e.create(rec+"/sign-off", "engineer", map[string]any{"revision": 1, "statement": "Accepted."})
		// The read, signed, sent back with a change: its sign-off is owned by the server and equal, so accepted.
		fix := withRevision(e.do(http.MethodGet, rec, "auditor", nil).object(t), 1, "remarks completed")
		fix["remarks"] = "tensile report attached"
		r := e.do(http.MethodPut, rec, "engineer", fix)
		if r.status != http.StatusOK || r.object(t)["sign_off"] != nil {
			t.Fatalf("correction of a signed PQR = %d %s, want 200 with sign_off null", r.status, r.body)
		}
		if got := e.do(http.MethodGet, rec, "auditor", nil).object(t)["sign_off"]; got != nil {
			t.Errorf("current revision after the correction: sign_off = %v, want null", got)
		}
		if got := e.do(http.MethodGet, rec+"?revision=1", "auditor", nil).object(t)["sign_off"]; got == nil {
			t.Errorf("revision 1 after the correction: sign_off null, want it kept")
		}
		revs := e.do(http.MethodGet, rec+"/revisions", "auditor", nil).items(t)
		if len(revs) != 2 || revs[0]["sign_off"] == nil || revs[1]["sign_off"] != nil {
			t.Errorf("revisions: want 1 signed, 2 unsigned; got %v", revs)
		}
		wantProblem(t, "signing the old revision", e.do(http.MethodPost, rec+"/sign-off", "engineer",
			map[string]any{"revision": 1, "statement": "Accepted."}), http.StatusConflict, "")
		e.create(rec+"/sign-off", "engineer", map[string]any{"revision": 2, "statement": "Accepted after the correction."})
	})
}
