package api_test

import (
	"context"
	"encoding/json"
	"net/http"
	"os"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
	"github.com/google/go-cmp/cmp"
)

// chromiumPath is where the browser test expects Chromium (bash .ci/setup installs it there).
const chromiumPath = "/usr/bin/chromium"

// browser starts a headless Chromium with a fresh profile for one test. It
// skips without Chromium on a laptop but fails when CI is set.
func browser(t *testing.T) context.Context {
	t.Helper()
	if _, err := os.Stat(chromiumPath); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("no Chromium at %s (%v); CI is set, so the browser test must run", chromiumPath, err)
		}
		t.Skipf("no Chromium at %s (%v): run bash .ci/setup to install it and run the browser test", chromiumPath, err)
	}
	profile := t.TempDir() // removed after the browser below has exited
	alloc, cancelAlloc := chromedp.NewExecAllocator(context.Background(),
		chromedp.ExecPath(chromiumPath), chromedp.Flag("headless", true), chromedp.NoSandbox,
		chromedp.DisableGPU, chromedp.Flag("disable-quic", true), chromedp.NoFirstRun,
		chromedp.Flag("disable-background-networking", true), chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true), chromedp.UserDataDir(profile))
	ctx, cancelCtx := chromedp.NewContext(alloc)
	ctx, cancelTimeout := context.WithTimeout(ctx, 60*time.Second)
	t.Cleanup(func() { cancelTimeout(); cancelCtx(); cancelAlloc() })
	return ctx
}

// TestPage drives the browser page served at "/": the safety caution shows,
// an auditor's token lists the test's coupons, and a wrong token shows the
// API's problem title.
func TestPage(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	ctx := browser(t)
	proc := e.rangedProcedure() // fixture coupons at 180 A fall below its qualified current
	var marks, ids []string
	for range 2 {
		b := couponBody(proc, "", uniq("C-page"))
		ids = append(ids, e.create("/v1/coupons", "technician", b)["id"].(string))
		marks = append(marks, b["coupon_mark"].(string))
	}

	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/"), chromedp.WaitVisible(chromedp.ID("caution"))); err != nil {
		t.Fatalf("load the page: %v", err)
	}
	caution, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("caution")))
	if err != nil {
		t.Fatalf("read the caution: %v", err)
	}
	for _, word := range []string{"estimates", "governing"} {
		if !strings.Contains(caution, word) {
			t.Errorf("caution %q does not contain %q", caution, word)
		}
	}

	if err := chromedp.Do(ctx,
		chromedp.SendKeys(chromedp.ID("token"), e.tokens["auditor"]),
		chromedp.Click(chromedp.ID("load")),
		chromedp.WaitVisible(chromedp.ID("coupons")),
	); err != nil {
		t.Fatalf("show coupons with the auditor's token: %v", err)
	}
	rows, err := chromedp.Run(ctx, chromedp.Evaluate[[][]string](
		`Array.from(document.querySelectorAll('#coupons tbody tr'), tr => Array.from(tr.cells, td => td.textContent))`))
	if err != nil {
		t.Fatalf("read the coupon table: %v", err)
	}
	// The fixture coupons as the page formats them: mark, day, welder, joint, A,
	// V, mm/s, m/min, revision, and the API's flags of the coupon ("variable direction").
	flags := map[string][]string{}
	for _, f := range e.do(http.MethodGet, "/v1/flags?subject_kind=coupon", "auditor", nil).items(t) {
		id := f["subject_id"].(string)
		switch f["kind"] {
		case "requirement": // first, in its own words
			flags[id] = append([]string{f["detail"].(string)}, flags[id]...)
		case "suspect_units":
			flags[id] = append(flags[id], f["variable"].(string)+" suspect units")
		default:
			flags[id] = append(flags[id], f["variable"].(string)+" "+f["direction"].(string))
		}
	}
	var want [][]string
	for i, m := range marks {
		fl := strings.Join(flags[ids[i]], ", ")
		if !strings.Contains(fl, "current_a below") {
			t.Errorf("coupon %s flags %q: want current_a below (180 A under the derived range)", m, fl)
		}
		want = append(want, []string{m, "2026-11-03", "W-07", "fillet", "180", "21.0", "5.00", "7.60", "1", fl})
	}
	if d := cmp.Diff(want, rows); d != "" {
		t.Errorf("coupon table (-want +got):\n%s", d)
	}
	if status, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("status"))); err != nil || status != "2 coupon(s)" {
		t.Errorf("status = %q (%v), want \"2 coupon(s)\"", status, err)
	}

	bad := e.doAuth(http.MethodGet, "/v1/coupons", "Bearer not-a-token-of-this-site", nil)
	title := wantProblem(t, "the API with a wrong token", bad, http.StatusUnauthorized, "").Title
	js, _ := json.Marshal(title)
	if err := chromedp.Do(ctx,
		chromedp.Clear(chromedp.ID("token")),
		chromedp.SendKeys(chromedp.ID("token"), "not-a-token-of-this-site"),
		chromedp.Click(chromedp.ID("load")),
	); err != nil {
		t.Fatalf("submit a wrong token: %v", err)
	}
	if _, err := chromedp.Run(ctx, chromedp.Poll[chromedp.Void](`document.getElementById('status').textContent.startsWith(`+string(js)+`)`)); err != nil {
		status, _ := chromedp.Run(ctx, chromedp.Text(chromedp.ID("status")))
		t.Fatalf("wrong token: the status never showed the problem title %s: %v (status %q)", js, err, status)
	}
	hidden, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`document.getElementById('coupons').hidden`))
	if err != nil {
		t.Fatal(err)
	}
	if !hidden {
		t.Errorf("coupon table still shown after a refused token")
	}
}
