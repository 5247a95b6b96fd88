package lab_test

import (
	"fmt"
	"html"
	"net/http"
	"net/url"
	"regexp"
	"strings"
	"testing"
)

// couponBody is a coupon on the procedure at 205 A (inside its 180–220 A).
func couponBody(proc, mark string) map[string]any {
	return map[string]any{
		"procedure_id": proc, "coupon_mark": mark, "welder_id": "W-07", "welded_on": "2026-11-03",
		"joint_type": "butt", "thickness_mm": 12.0, "pass_number": 1, "current_a": 205.0, "voltage_v": 29.0,
		"travel_speed_mm_s": 6.0, "position": "1G", "preheat_c": 20.0,
	}
}

// correctionForm reads a correction page and returns its form values as
// the page filled them, with the form token.
func correctionForm(t *testing.T, f *form, path string) url.Values {
	t.Helper()
	res, page := f.get(path)
	if res.StatusCode != http.StatusOK {
		t.Fatalf("GET %s = %d", path, res.StatusCode)
	}
	v := url.Values{}
	for _, m := range regexp.MustCompile(`<input id="[^"]*" name="([^"]+)" value="([^"]*)"`).FindAllStringSubmatch(page, -1) {
		v.Set(m[1], html.UnescapeString(m[2]))
	}
	for _, m := range regexp.MustCompile(`<input type="hidden" name="([^"]+)" value="([^"]*)"`).FindAllStringSubmatch(page, -1) {
		v.Set(m[1], html.UnescapeString(m[2]))
	}
	for _, m := range regexp.MustCompile(`(?s)<select id="[^"]*" name="([^"]+)"[^>]*>.*?<option value="([^"]*)" selected>`).FindAllStringSubmatch(page, -1) {
		v.Set(m[1], m[2])
	}
	return v
}

// TestCorrectAndVoidWithReason corrects a coupon and a section and voids
// them through the pages; a correction without a reason is refused with the
// reason shown next to the field, and nothing is written.
func TestCorrectAndVoidWithReason(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	proc, _ := e.rangedProcedure()
	id := e.call(http.MethodPost, "/v1/coupons", "technician", couponBody(proc, uniq("C-FIX")), http.StatusCreated)["id"].(string)
	sec := e.call(http.MethodPost, "/v1/coupons/"+id+"/measurements", "technician", map[string]any{
		"section": "A", "penetration_mm": 2.0, "bead_width_mm": 9.0, "reinforcement_mm": 1.0, "acceptance": "accept", "inspector": "QC-3",
	}, http.StatusCreated)["id"].(string)
	f := e.signedIn("technician")

	v := correctionForm(t, f, "/lab/coupons/"+id+"/correct")
	if v.Get("current_a") != "205" || v.Get("base_revision") != "1" || v.Get("procedure_id") != proc {
		t.Fatalf("correction form filled with %v, want the coupon's revision 1", v)
	}
	v.Set("current_a", "210")
	res := f.postPage("/lab/coupons/"+id+"/correct", v)
	if res.status != http.StatusBadRequest || !strings.Contains(res.body, `id="f-reason-why"`) {
		t.Errorf("correction without a reason = %d, want 400 with the reason next to the reason field:\n%s", res.status, res.body)
	}
	if got := e.call(http.MethodGet, "/v1/coupons/"+id, "auditor", nil, http.StatusOK); got["revision"] != 1.0 {
		t.Errorf("a refused correction wrote revision %v", got["revision"])
	}
	v.Set("reason", "current misread from the meter")
	if res := f.postPage("/lab/coupons/"+id+"/correct", v); res.status != http.StatusSeeOther {
		t.Fatalf("correction with a reason = %d, want 303:\n%s", res.status, res.body)
	}
	got := e.call(http.MethodGet, "/v1/coupons/"+id, "auditor", nil, http.StatusOK)
	if got["revision"] != 2.0 || got["current_a"] != 210.0 || got["reason"] != "current misread from the meter" || got["preheat_c"] != 20.0 {
		t.Errorf("after the correction the coupon is %v, want revision 2 at 210 A with the reason, the rest unchanged", got)
	}

	sv := correctionForm(t, f, "/lab/sections/"+sec+"/correct")
	sv.Set("penetration_mm", "2.3")
	sv.Set("reason", "re-measured on the etched face")
	if res := f.postPage("/lab/sections/"+sec+"/correct", sv); res.status != http.StatusSeeOther {
		t.Fatalf("section correction = %d:\n%s", res.status, res.body)
	}
	if m := e.call(http.MethodGet, "/v1/measurements/"+sec, "auditor", nil, http.StatusOK); m["penetration_mm"] != 2.3 || m["revision"] != 2.0 {
		t.Errorf("section after its correction: %v", m)
	}
	_, page := f.get("/lab/sections/" + sec + "/correct")
	if res := f.postPage("/lab/sections/"+sec+"/void", url.Values{"form_token": {formToken(t, page)}, "base_revision": {"2"}, "reason": {"wrong coupon"}}); res.status != http.StatusSeeOther {
		t.Fatalf("section void = %d:\n%s", res.status, res.body)
	}
	_, page = f.get("/lab/coupons/" + id)
	if res := f.postPage("/lab/coupons/"+id+"/void", url.Values{"form_token": {formToken(t, page)}, "base_revision": {"2"}}); res.status != http.StatusBadRequest || !strings.Contains(res.body, `id="f-reason-why"`) {
		t.Errorf("void without a reason = %d, want 400 with the reason next to its field", res.status)
	}
	if res := f.postPage("/lab/coupons/"+id+"/void", url.Values{"form_token": {formToken(t, page)}, "base_revision": {"2"}, "reason": {"plate cracked in cutting"}}); res.status != http.StatusSeeOther {
		t.Fatalf("void = %d:\n%s", res.status, res.body)
	}
	if got := e.call(http.MethodGet, "/v1/coupons/"+id, "auditor", nil, http.StatusOK); got["voided"] != true || got["revision"] != 3.0 {
		t.Errorf("after the void the coupon is %v, want revision 3, voided", got)
	}
}

// TestInchPoundEntry enters a coupon with the display set to inch-pound: the
// form's fields are the registry's inch-pound spellings, which the API
// converts (13 in/min = 13 × 25.4 / 60 mm/s, NIST SP 811 B.8), and the
// coupon page shows the values back in inch-pound.
func TestInchPoundEntry(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	proc, _ := e.rangedProcedure()
	f := e.signedIn("technician")
	_, page := f.get("/lab/")
	if res := f.post("/lab/units", url.Values{"form_token": {formToken(t, page)}, "units": {"inch-pound"}, "back": {"/lab/"}}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("choose inch-pound = %d", res.StatusCode)
	}
	v := correctionForm(t, f, "/lab/coupons/new?procedure_id="+proc)
	for _, name := range []string{"travel_speed_in_min", "thickness_in", "preheat_f", "wire_diameter_in"} {
		if _, ok := v[name]; !ok {
			t.Errorf("the inch-pound entry form has no field %s (fields %v)", name, v)
		}
	}
	mark := uniq("C-IN")
	for k, x := range map[string]string{"coupon_mark": mark, "welder_id": "W-07", "welded_on": "2026-11-05", "joint_type": "butt",
		"pass_number": "1", "thickness_in": "0.5", "current_a": "205", "voltage_v": "29", "travel_speed_in_min": "13", "preheat_f": "68"} {
		v.Set(k, x)
	}
	res := f.postPage("/lab/coupons", v)
	if res.status != http.StatusSeeOther {
		t.Fatalf("save in inch-pound = %d:\n%s", res.status, res.body)
	}
	list := e.call(http.MethodGet, "/v1/coupons?coupon_mark="+mark, "auditor", nil, http.StatusOK)["items"].([]any)
	c := list[0].(map[string]any)
	if ts := c["travel_speed_mm_s"].(float64); fmt.Sprintf("%.9f", ts) != fmt.Sprintf("%.9f", 13*25.4/60) || c["thickness_mm"] != 12.7 || c["preheat_c"] != 20.0 {
		t.Errorf("stored %v mm/s, %v mm, %v °C; want 13 in/min = 5.503333333 mm/s, 0.5 in = 12.7 mm, 68 °F = 20 °C", c["travel_speed_mm_s"], c["thickness_mm"], c["preheat_c"])
	}
	_, shown := f.get(res.location)
	contains(t, "the coupon page in inch-pound", shown, "13 in/min", "0.5 in", "68 °F")
}

// TestCouponListPages lists more coupons than one page holds: the next-page
// link leads to the rest, every coupon once; an auditor sees the list but
// may not open the entry form.
func TestCouponListPages(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	proc, code := e.rangedProcedure()
	want := map[string]bool{}
	for range 53 {
		m := uniq("C-LIST")
		e.call(http.MethodPost, "/v1/coupons", "technician", couponBody(proc, m), http.StatusCreated)
		want[m] = true
	}
	f := e.signedIn("auditor")
	seen := map[string]int{}
	markRE := regexp.MustCompile(`<td><a href="/lab/coupons/[0-9a-f-]+">(C-LIST-\d+)</a>`)
	nextRE := regexp.MustCompile(`<a href="([^"]+)" rel="next">`)
	path, pages := "/lab/coupons", 0
	for path != "" {
		res, page := f.get(path)
		if res.StatusCode != http.StatusOK {
			t.Fatalf("GET %s = %d", path, res.StatusCode)
		}
		pages++
		for _, m := range markRE.FindAllStringSubmatch(page, -1) {
			seen[m[1]]++
		}
		if pages == 1 {
			contains(t, "the first page", page, code+" rev 1", "no sections")
		}
		path = ""
		if m := nextRE.FindStringSubmatch(page); m != nil {
			path = html.UnescapeString(m[1])
		}
	}
	for m := range want {
		if seen[m] != 1 {
			t.Errorf("coupon %s listed %d times, want once", m, seen[m])
		}
	}
	if pages != 2 {
		t.Errorf("53 coupons took %d pages of 50, want 2", pages)
	}
	if res, _ := f.get("/lab/coupons/new"); res.StatusCode != http.StatusForbidden {
		t.Errorf("auditor opening the entry form = %d, want 403", res.StatusCode)
	}
}

// TestCautionBesidePredictions checks a coupon whose flags compare it with a
// model's prediction shows the safety caution. The shop is the engineer
// pages' fixture with its fit activated.
func TestCautionBesidePredictions(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	e.call(http.MethodPost, "/v1/calibrations/"+shop.cal+"/activate", "engineer", map[string]any{"reason": "fixture fit in use"}, http.StatusCreated)
	flags := e.call(http.MethodGet, "/v1/flags?kind=model&procedure_id="+shop.proc, "auditor", nil, http.StatusOK)["items"].([]any)
	if len(flags) == 0 {
		t.Fatal("the activated fit flags no coupon; the fixture's deep coupon should be outside its prediction interval")
	}
	f := e.signedIn("technician")
	_, page := f.get("/lab/coupons/" + flags[0].(map[string]any)["subject_id"].(string))
	contains(t, "a coupon with a model flag", page, `id="caution"`, "prediction interval")
}
