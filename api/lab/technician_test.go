package lab_test

import (
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// submit clicks a form's button and waits for the answer's page to replace
// this one (the old page is marked first, so the wait cannot see it).
func submit(button string) chromedp.Action[chromedp.Void] {
	return chromedp.Steps(
		chromedp.Evaluate[chromedp.Void](`document.body.dataset.before = 'submit'`),
		chromedp.Click(chromedp.ID(button)),
		chromedp.WaitReady(chromedp.CSS(`body:not([data-before])`)),
	)
}

// fill types values into the fields with these ids.
func fill(values map[string]string) chromedp.Action[chromedp.Void] {
	var steps []chromedp.Action[chromedp.Void]
	for id, v := range values {
		steps = append(steps, chromedp.Clear(chromedp.ID(id)), chromedp.SendKeys(chromedp.ID(id), v))
	}
	return chromedp.Steps(steps...)
}

// TestTechnicianEntersCoupon enters a coupon in real Chromium as a
// technician: a wrong voltage is refused with the reason next to the field,
// the fixed coupon saves and shows its flags as sentences, and two sections
// are added. The qualified 180–220 A is the structural-style rule set's
// ±10 % of the PQR's 200 A (the rule set's own note: recalled from memory).
func TestTechnicianEntersCoupon(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	proc, code := e.rangedProcedure()
	ctx := browser(t, 1280)
	e.signIn(t, ctx, "technician")
	mark := uniq("C-LAB")
	if err := chromedp.Do(ctx,
		chromedp.Navigate(e.url+"/lab/coupons/new"),
		chromedp.WaitVisible(chromedp.ID("pick-procedure-id")),
		chromedp.SetValue(chromedp.ID("pick-procedure-id"), proc),
		chromedp.Click(chromedp.ID("use-procedure")),
		chromedp.WaitVisible(chromedp.ID("coupon-form")),
	); err != nil {
		t.Fatalf("choose the procedure: %v", err)
	}
	// The procedure's values fill the defaults.
	for id, want := range map[string]string{"f-wire_diameter_mm": "1.2", "f-shielding_gas": "Ar-10CO2", "f-polarity": "DCEP", "f-position": "1G"} {
		if got, err := chromedp.Run(ctx, chromedp.Value(chromedp.ID(id))); err != nil || got != want {
			t.Errorf("%s = %q (%v), want the procedure's %q", id, got, err, want)
		}
	}
	if err := chromedp.Do(ctx,
		fill(map[string]string{"f-coupon_mark": mark, "f-welder_id": "W-07", "f-welded_on": "2026-11-03",
			"f-pass_number": "1", "f-thickness_mm": "12", "f-current_a": "235", "f-voltage_v": "290",
			"f-travel_speed_mm_s": "6", "f-wire_feed_speed_m_min": "9.5", "f-ctwd_mm": "19"}),
		chromedp.SetValue(chromedp.ID("f-joint_type"), "butt"),
		chromedp.Click(chromedp.ID("save")),
		chromedp.WaitVisible(chromedp.ID("f-voltage_v-why")),
	); err != nil {
		t.Fatalf("save with a wrong voltage: %v", err)
	}
	why, _ := chromedp.Run(ctx, chromedp.Text(chromedp.ID("f-voltage_v-why")))
	// The API's refusal in words, in the unit typed (voltage's plausible 5–60 V: the domain primer's table).
	contains(t, "the reason next to the voltage", why, "290 V", "60 V")
	if v, _ := chromedp.Run(ctx, chromedp.Value(chromedp.ID("f-current_a"))); v != "235" {
		t.Errorf("after the refusal the current field holds %q, want what was typed (235)", v)
	}
	if ids := unlabelled(t, ctx); len(ids) > 0 {
		t.Errorf("entry form inputs without a label: %v", ids)
	}
	shot, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
	if err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(screenshotDir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(screenshotDir, "technician-entry.png"), shot, 0o644); err != nil {
		t.Fatal(err)
	}

	if err := chromedp.Do(ctx, fill(map[string]string{"f-voltage_v": "29"}), chromedp.Click(chromedp.ID("save")),
		chromedp.WaitVisible(chromedp.ID("saved"))); err != nil {
		t.Fatalf("save the fixed coupon: %v", err)
	}
	wantFlags := []string{
		"Current 235 A is above the qualified 180–220 A of " + code + " rev 1",
		"Preheat was not recorded, so it cannot be checked",
	}
	flags, _ := chromedp.Run(ctx, chromedp.Text(chromedp.ID("flag-list")))
	contains(t, "the flags after saving", flags, wantFlags...)

	for _, sec := range []struct{ label, pen string }{{"A", "2.4"}, {"B", "2.1"}} {
		if got, _ := chromedp.Run(ctx, chromedp.Value(chromedp.ID("f-section"))); got != sec.label {
			t.Errorf("the next section's label is %q, want %q", got, sec.label)
		}
		if err := chromedp.Do(ctx,
			fill(map[string]string{"f-penetration_mm": sec.pen, "f-bead_width_mm": "9.5", "f-reinforcement_mm": "1.5"}),
			submit("save-section"),
		); err != nil {
			t.Fatalf("add section %s: %v", sec.label, err)
		}
	}
	rows, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('#section-table tbody tr'), tr => tr.cells[0].firstChild.textContent.trim() + ' ' + tr.cells[1].textContent.trim() + ' ' + tr.cells[2].textContent)`))
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(rows, "; ") != "A ✓ accepted 2.4 mm; B ✓ accepted 2.1 mm" {
		t.Errorf("section rows = %q, want A and B accepted at 2.4 and 2.1 mm", rows)
	}
	flags, _ = chromedp.Run(ctx, chromedp.Text(chromedp.ID("flag-list")))
	contains(t, "the flags after two sections", flags, wantFlags...)
	if ids := unlabelled(t, ctx); len(ids) > 0 {
		t.Errorf("coupon page inputs without a label: %v", ids)
	}

	// A write whose form lost its token is refused and changes nothing.
	if err := chromedp.Do(ctx,
		chromedp.Evaluate[chromedp.Void](`document.querySelector('#void-form input[name=form_token]').remove()`),
		fill(map[string]string{"f-reason": "wrong plate"}),
		submit("void-coupon"),
	); err != nil {
		t.Fatal(err)
	}
	title, _ := chromedp.Run(ctx, chromedp.Title())
	if !strings.HasPrefix(title, "Form refused") {
		t.Errorf("void without the form token: page %q, want the refused-form page", title)
	}
	list := e.call(http.MethodGet, "/v1/coupons?coupon_mark="+mark, "auditor", nil, http.StatusOK)["items"].([]any)
	if len(list) != 1 || list[0].(map[string]any)["voided"] != false {
		t.Errorf("after the refused void the coupon list for %s holds %v, want the coupon, not voided", mark, list)
	}
}
