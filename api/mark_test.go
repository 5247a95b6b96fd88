package api_test

import (
	"net/http"
	"strings"
	"testing"
)

// TestMarkConflict: correcting a coupon's mark or a PQR's number to one a
// current record holds is a 409 problem naming the field, the mark and the
// holder's id; once the holder is corrected to another mark, it can be taken.
func TestMarkConflict(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, k := range []struct {
		name, path, field string
		body              func(mark string) map[string]any
	}{
		{"Coupon", "/v1/coupons", "coupon_mark", func(m string) map[string]any { return couponBody(e.procedure(), "", m) }},
		{"QualificationRecord", "/v1/qualification-records", "record_number", qualificationRecordBody},
	} {
		t.Run(k.name, func(t *testing.T) {
			markA, markB := uniq("M"), uniq("M")
			a := e.create(k.path, "engineer", k.body(markA))
			b := e.create(k.path, "engineer", k.body(markB))
			fix := withRevision(k.body(markA), 1, "mark mistyped")
			r := e.do(http.MethodPut, k.path+"/"+b["id"].(string), "engineer", fix)
			p := wantProblem(t, "correction to a held mark", r, http.StatusConflict, k.field)
			if !strings.Contains(p.Detail, markA) || p.ExistingID != a["id"] {
				t.Errorf("409 detail %q existing_id %q: want the mark %s and the holder %s", p.Detail, p.ExistingID, markA, a["id"])
			}
			r = e.do(http.MethodPut, k.path+"/"+a["id"].(string), "engineer", withRevision(k.body(uniq("M")), 1, "mark re-stamped"))
			if r.status != http.StatusOK {
				t.Fatalf("correcting the holder's mark = %d %s", r.status, r.body)
			}
			if r = e.do(http.MethodPut, k.path+"/"+b["id"].(string), "engineer", fix); r.status != http.StatusOK {
				t.Errorf("correction to a mark freed by a correction = %d %s, want 200", r.status, r.body)
			}
		})
	}
}
