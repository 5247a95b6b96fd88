package lab_test

import (
	"net/http"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// screenshotDir is where the browser tests keep the README's screenshots.
var screenshotDir = filepath.Join("..", "..", "testdata", "screenshots")

// TestEngineerCalibrationInBrowser opens a jackson_free calibration of
// eight coupons in real Chromium: the caution shows; measured against
// predicted and the three residual charts each hold one marker per fitted
// coupon, each linked to its coupon's page; the planted deep coupon is
// tagged and listed with its reasons; the exponent test is stated in
// words. It writes the README's screenshot of the page.
func TestEngineerCalibrationInBrowser(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	ctx := browser(t, 1280)
	e.signIn(t, ctx, "engineer")
	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/lab/calibrations/"+shop.cal), chromedp.WaitVisible(chromedp.ID("measured-predicted"))); err != nil {
		t.Fatalf("open the calibration page: %v", err)
	}
	caution, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("caution")))
	if err != nil {
		t.Fatal(err)
	}
	contains(t, "the caution", caution, "estimates", "governing welding code")
	for _, fig := range []string{"measured-predicted", "residuals-current_a", "residuals-voltage_v", "residuals-travel_speed_mm_s"} {
		links, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('#`+fig+` svg .plot-point'),
			g => (g.closest('a') || {getAttribute: () => ''}).getAttribute('href'))`))
		if err != nil {
			t.Fatalf("read the markers of %s: %v", fig, err)
		}
		if len(links) != len(shop.coupons) {
			t.Errorf("%s has %d markers, want one per fitted coupon: %d", fig, len(links), len(shop.coupons))
			continue
		}
		var want []string
		for _, c := range shop.coupons {
			want = append(want, "/lab/coupons/"+c)
		}
		slices.Sort(links)
		slices.Sort(want)
		if !slices.Equal(links, want) {
			t.Errorf("%s links %v, want the coupons' pages %v", fig, links, want)
		}
	}
	tags, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('#measured-predicted svg .plot-tag'), t => t.textContent)`))
	if err != nil {
		t.Fatal(err)
	}
	marked, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS("ul.marked")))
	if err != nil {
		t.Fatalf("no list of marked coupons: %v", err)
	}
	if len(tags) == 0 || !strings.Contains(marked, "#1") {
		t.Errorf("tags %v and marked list %q: want the planted deep coupon tagged #1 and listed", tags, marked)
	}
	// The eighth coupon was made 60 % deeper than the law gives.
	deep, _ := chromedp.Run(ctx, chromedp.Evaluate[string](`(document.querySelector('ul.marked a[href="/lab/coupons/`+shop.coupons[7]+`"]') || {textContent: ''}).textContent`))
	if !strings.Contains(deep, "-08") {
		t.Errorf("the planted coupon is not in the marked list by its mark (found %q in %q)", deep, marked)
	}
	words, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("exponent-test")))
	if err != nil {
		t.Fatal(err)
	}
	contains(t, "the exponent test", words, "published exponents", "F(3, 4)", "8 coupons")
	if ids := unlabelled(t, ctx); len(ids) > 0 {
		t.Errorf("inputs without a label: %v", ids)
	}
	png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	if err := os.MkdirAll(screenshotDir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(screenshotDir, "engineer-calibration.png"), png, 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestEngineerActivatesCalibration activates a calibration in the browser:
// without a reason the API's refusal shows next to the field and nothing
// changes; with one the page says so and the API answers it is in use,
// with the reason as typed.
func TestEngineerActivatesCalibration(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	ctx := browser(t, 375)
	e.signIn(t, ctx, "engineer")
	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/lab/calibrations/"+shop.cal), chromedp.WaitVisible(chromedp.ID("change-use")),
		chromedp.Click(chromedp.ID("change-use")), chromedp.WaitVisible(chromedp.ID("f-reason-why"))); err != nil {
		t.Fatalf("activate without a reason: %v", err)
	}
	why, _ := chromedp.Run(ctx, chromedp.Text(chromedp.ID("f-reason-why")))
	// The page adds no rule of its own: it shows the API's own reason.
	refusal := e.call(http.MethodPost, "/v1/calibrations/"+shop.cal+"/activate", "engineer", map[string]any{"reason": ""}, http.StatusUnprocessableEntity)
	apiWhy := refusal["errors"].([]any)[0].(map[string]any)["reason"].(string)
	contains(t, "the refusal beside the reason", why, "Not saved", apiWhy)
	if e.call(http.MethodGet, "/v1/calibrations/"+shop.cal, "auditor", nil, http.StatusOK)["active"] != false {
		t.Fatalf("a refused activation activated the calibration")
	}
	if overflows(t, ctx) {
		t.Errorf("the calibration page scrolls sideways at 375 px")
	}
	const reason = "eight trial coupons, exponents checked"
	if err := chromedp.Do(ctx, chromedp.SendKeys(chromedp.ID("f-reason"), reason), chromedp.Click(chromedp.ID("change-use")),
		chromedp.WaitVisible(chromedp.ID("activated"))); err != nil {
		t.Fatalf("activate with a reason: %v", err)
	}
	notice, _ := chromedp.Run(ctx, chromedp.Text(chromedp.ID("activated")))
	contains(t, "the notice", notice, "Activated")
	cal := e.call(http.MethodGet, "/v1/calibrations/"+shop.cal, "auditor", nil, http.StatusOK)
	acts, _ := cal["activations"].([]any)
	if cal["active"] != true || len(acts) != 1 || acts[0].(map[string]any)["reason"] != reason {
		t.Errorf("after activating: active %v, activations %v; want in use with the reason %q", cal["active"], acts, reason)
	}
	button, _ := chromedp.Run(ctx, chromedp.Text(chromedp.ID("change-use")))
	contains(t, "the button after activating", button, "Deactivate")
	if err := chromedp.Do(ctx, chromedp.SendKeys(chromedp.ID("f-reason"), "refit after the new wire lot"), chromedp.Click(chromedp.ID("change-use")),
		chromedp.WaitVisible(chromedp.ID("deactivated"))); err != nil {
		t.Fatalf("deactivate with a reason: %v", err)
	}
	notice, _ = chromedp.Run(ctx, chromedp.Text(chromedp.ID("deactivated")))
	contains(t, "the notice", notice, "Deactivated")
	if cal := e.call(http.MethodGet, "/v1/calibrations/"+shop.cal, "auditor", nil, http.StatusOK); cal["active"] != false {
		t.Errorf("after deactivating the calibration is still in use")
	}
}
