package api_test

import (
	"encoding/json"
	"net/http"
	"testing"
	"time"

	"github.com/google/go-cmp/cmp"
	"github.com/google/uuid"
)

// TestRoundTrip creates each kind of record through HTTP, reads it back and
// finds it in its list, checking every field: what was sent comes back as
// sent, plus the bookkeeping of revision 1, and nothing else.
func TestRoundTrip(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	minimal := map[string]func() (map[string]any, map[string]any){
		// Only the required fields; the second map holds the defaults the record gets.
		"Procedure": func() (map[string]any, map[string]any) {
			b := map[string]any{"code": uniq("WPS"), "title": "Minimal", "process": "FCAW",
				"filler_classification": "E71T-1C", "wire_diameter_mm": 1.2, "polarity": "DCEP",
				"positions": []any{"1G"}, "base_metal_group": "carbon steel", "thickness_min_mm": 3.0, "thickness_max_mm": 3.0}
			return b, map[string]any{"status": "draft", "shielding_gas": "", "transfer_mode": "", "supporting_record_ids": []any{}}
		},
		"QualificationRecord": func() (map[string]any, map[string]any) {
			b := qualificationRecordBody(uniq("PQR"))
			for _, k := range []string{"shielding_gas", "transfer_mode", "wire_feed_speed_m_min", "ctwd_mm", "preheat_c", "interpass_c", "tensile_strength_mpa", "remarks"} {
				delete(b, k)
			}
			return b, map[string]any{"shielding_gas": "", "transfer_mode": "", "remarks": ""}
		},
		"Coupon": func() (map[string]any, map[string]any) {
			b := couponBody(e.procedure(), "", uniq("C"))
			for _, k := range []string{"power_source_id", "filler_lot", "wire_feed_speed_m_min", "ctwd_mm", "shielding_gas", "preheat_c", "interpass_c",
				"wire_diameter_mm", "polarity"} {
				delete(b, k)
			}
			// Left out, wire diameter, gas and polarity read as the procedure's (procedureBody), named in inherited.
			return b, map[string]any{"power_source_id": "", "filler_lot": "", "shielding_gas": "Ar-25CO2", "wire_diameter_mm": 0.9,
				"polarity": "DCEP", "process": "GMAW", "inherited": []any{"process", "wire_diameter_mm", "shielding_gas", "polarity"}}
		},
		"Measurement": func() (map[string]any, map[string]any) {
			b := measurementBody("B")
			for _, k := range []string{"leg1_mm", "leg2_mm", "throat_mm", "fused_area_mm2", "remark"} {
				delete(b, k)
			}
			return b, map[string]any{"remark": ""}
		},
	}
	for _, k := range inputKinds() {
		t.Run(k.name, func(t *testing.T) {
			full := k.body(e)
			min, defaults := minimal[k.name]()
			for _, c := range []struct {
				name           string
				body, defaults map[string]any
			}{{"Full", full, nil}, {"Minimal", min, defaults}} {
				t.Run(c.name, func(t *testing.T) {
					want := normalize(t, c.body)
					for f, v := range c.defaults {
						want[f] = v
					}
					if k.name == "Measurement" {
						want["coupon_id"] = e.coupon() // from the path
					}
					if k.name == "Coupon" && c.defaults == nil { // a coupon has no process of its own: its procedure's
						want["process"], want["inherited"] = "GMAW", []any{"process"}
					}
					checkRoundTrip(t, e, k, want, c.body)
				})
			}
		})
	}
}

// checkRoundTrip posts body and checks the answer, the read-back and the list entry against want.
func checkRoundTrip(t *testing.T, e *testEnv, k inputKind, want, body map[string]any) {
	t.Helper()
	r := e.do(http.MethodPost, k.path(e), k.role, body)
	if r.status != http.StatusCreated {
		t.Fatalf("POST %s = %d %s, want 201", k.path(e), r.status, r.body)
	}
	got := r.object(t)
	id, _ := got["id"].(string)
	if _, err := uuid.Parse(id); err != nil {
		t.Fatalf("created id = %v, want a UUID", got["id"])
	}
	if loc := r.header.Get("Location"); loc != k.read+"/"+id {
		t.Errorf("Location = %q, want %q", loc, k.read+"/"+id)
	}
	at, err := time.Parse(time.RFC3339Nano, got["created_at"].(string))
	if err != nil || time.Since(at).Abs() > time.Minute {
		t.Errorf("created_at = %v (%v), want about now", got["created_at"], err)
	}
	want = clone(want)
	for f, v := range map[string]any{"site": e.site, "id": id, "revision": 1.0, "created_at": got["created_at"],
		"created_by": userName(k.role), "reason": "", "voided": false} {
		want[f] = v
	}
	if k.name == "Procedure" || k.name == "QualificationRecord" {
		want["sign_off"] = nil // a new revision is unsigned
	}
	if d := cmp.Diff(want, got); d != "" {
		t.Errorf("POST %s answer (-want +got):\n%s", k.path(e), d)
	}
	read := e.do(http.MethodGet, k.read+"/"+id, "auditor", nil)
	if read.status != http.StatusOK {
		t.Fatalf("GET %s/%s = %d %s", k.read, id, read.status, read.body)
	}
	if d := cmp.Diff(got, read.object(t)); d != "" {
		t.Errorf("GET %s/%s differs from the create answer (-create +read):\n%s", k.read, id, d)
	}
	list := e.do(http.MethodGet, k.read+"?limit=500", "auditor", nil)
	var found map[string]any
	for _, it := range list.items(t) {
		if it["id"] == id {
			found = it
		}
	}
	if d := cmp.Diff(got, found); d != "" {
		t.Errorf("GET %s list entry differs from the create answer (-create +list):\n%s", k.read, d)
	}
}

// normalize gives a request body the shape decoded JSON has (numbers as float64, lists as []any).
func normalize(tb testing.TB, b map[string]any) map[string]any {
	tb.Helper()
	js, err := json.Marshal(b)
	if err != nil {
		tb.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(js, &m); err != nil {
		tb.Fatal(err)
	}
	return m
}
