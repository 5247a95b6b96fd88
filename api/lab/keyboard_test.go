package lab_test

import (
	"context"
	"fmt"
	"net/http"
	"testing"

	"github.com/chromedp/chromedp"
)

// tabTo presses Tab until the element with id has the focus (at most 120
// presses), as a person at the keyboard would.
func tabTo(t *testing.T, ctx context.Context, id string) {
	t.Helper()
	for range 120 {
		at, err := chromedp.Run(ctx, chromedp.Evaluate[string](`document.activeElement ? document.activeElement.id : ''`))
		if err != nil {
			t.Fatal(err)
		}
		if at == id {
			return
		}
		if err := chromedp.Do(ctx, chromedp.KeyEvent("\t")); err != nil {
			t.Fatal(err)
		}
	}
	t.Fatalf("Tab never reached #%s", id)
}

// typeInto tabs to a field and types text (for a choice, its type-ahead).
func typeInto(t *testing.T, ctx context.Context, id, text string) {
	t.Helper()
	tabTo(t, ctx, id)
	if err := chromedp.Do(ctx, chromedp.KeyEvent(text)); err != nil {
		t.Fatal(err)
	}
}

// TestKeyboardOnlyEntry enters a coupon and a section with Tab, typing and
// Enter alone, at a phone's width (375 px), where the pages must not scroll
// sideways.
func TestKeyboardOnlyEntry(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	_, code := e.rangedProcedure()
	ctx := browser(t, 375)
	e.signIn(t, ctx, "technician")
	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/lab/coupons/new"), chromedp.WaitVisible(chromedp.ID("pick-procedure-id"))); err != nil {
		t.Fatal(err)
	}
	typeInto(t, ctx, "pick-procedure-id", code)
	tabTo(t, ctx, "use-procedure")
	if err := chromedp.Do(ctx, chromedp.KeyEvent("\r"), chromedp.WaitVisible(chromedp.ID("coupon-form"))); err != nil {
		t.Fatalf("Enter on the procedure's button: %v", err)
	}
	if overflows(t, ctx) {
		t.Errorf("the entry form scrolls sideways at 375 px")
	}
	mark := uniq("C-KEY")
	for _, f := range []struct{ id, text string }{
		{"f-coupon_mark", mark}, {"f-welder_id", "W-07"}, {"f-welded_on", "2026-11-04"}, {"f-joint_type", "butt"},
		{"f-pass_number", "1"}, {"f-thickness_mm", "12"}, {"f-current_a", "205"}, {"f-voltage_v", "29"},
		{"f-travel_speed_mm_s", "6"}, {"f-preheat_c", "20"},
	} {
		typeInto(t, ctx, f.id, f.text)
	}
	if jt, _ := chromedp.Run(ctx, chromedp.Value(chromedp.ID("f-joint_type"))); jt != "butt" {
		t.Errorf("joint type chosen by typing = %q, want butt", jt)
	}
	tabTo(t, ctx, "f-preheat_c")
	if err := chromedp.Do(ctx, chromedp.KeyEvent("\r"), chromedp.WaitVisible(chromedp.ID("saved"))); err != nil {
		t.Fatalf("Enter in the last field did not save the coupon: %v", err)
	}
	if overflows(t, ctx) {
		t.Errorf("the coupon page scrolls sideways at 375 px")
	}
	for _, f := range []struct{ id, text string }{{"f-penetration_mm", "2.2"}, {"f-bead_width_mm", "9"}, {"f-reinforcement_mm", "1.4"}} {
		typeInto(t, ctx, f.id, f.text)
	}
	if err := chromedp.Do(ctx, chromedp.KeyEvent("\r"), chromedp.WaitVisible(chromedp.ID("section-table"))); err != nil {
		t.Fatalf("Enter did not save the section: %v", err)
	}
	if overflows(t, ctx) {
		t.Errorf("the coupon page with its section table scrolls sideways at 375 px")
	}
	list := e.call(http.MethodGet, "/v1/coupons?coupon_mark="+mark, "auditor", nil, http.StatusOK)["items"].([]any)
	if len(list) != 1 {
		t.Fatalf("coupons marked %s: %d, want 1", mark, len(list))
	}
	c := list[0].(map[string]any)
	secs := e.call(http.MethodGet, fmt.Sprintf("/v1/coupons/%s/measurements", c["id"]), "auditor", nil, http.StatusOK)["items"].([]any)
	if c["current_a"] != 205.0 || c["preheat_c"] != 20.0 || c["joint_type"] != "butt" || len(secs) != 1 {
		t.Errorf("stored coupon %v with %d sections, want 205 A, 20 °C, butt and one section", c, len(secs))
	}
}
