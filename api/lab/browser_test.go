package lab_test

import (
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// TestStartPageInBrowser signs a technician in with the token in real
// Chromium at a phone's width (375 px): the start page shows the caution,
// every input has a label, the page does not scroll sideways, and signing
// out leads back to the sign-in page.
func TestStartPageInBrowser(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	ctx := browser(t, 375)
	e.signIn(t, ctx, "technician")
	caution, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("caution")))
	if err != nil {
		t.Fatal(err)
	}
	contains(t, "the caution", caution, "estimates", "governing welding code", "code of record")
	if ids := unlabelled(t, ctx); len(ids) > 0 {
		t.Errorf("inputs without a label: %v", ids)
	}
	if overflows(t, ctx) {
		t.Errorf("the start page scrolls sideways at 375 px")
	}
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.ID("sign-out")), chromedp.WaitVisible(chromedp.ID("token"))); err != nil {
		t.Fatalf("sign out: %v", err)
	}
	loc, _ := chromedp.Run(ctx, chromedp.Location())
	if !strings.Contains(loc, "/lab/sign-in") {
		t.Errorf("after signing out the browser is at %s, want the sign-in page", loc)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/lab/"), chromedp.WaitVisible(chromedp.ID("token"))); err != nil {
		t.Errorf("the start page after signing out did not ask to sign in: %v", err)
	}
}
