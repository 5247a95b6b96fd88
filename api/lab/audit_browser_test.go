package lab_test

import (
	"bytes"
	"context"
	"encoding/csv"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	cdpbrowser "github.com/chromedp/cdproto/browser"
	"github.com/chromedp/chromedp"
)

// TestAuditorRecordInBrowser opens a procedure's record view as an auditor
// in real Chromium: the caution, the qualification record and the
// procedure with their sign-offs, every coupon by its mark with its
// sections, the range flag in words, and the corrected coupon's history as
// field, old value, new value, who, when and why. The page fits 1440 px
// and 375 px without scrolling sideways and every input has a label. The
// auditor then downloads the printed record and the coupons' CSV from the
// page's links: the PDF, read back with pdftotext (poppler-utils), carries
// the coupon marks and the root hash of the log checkpoint GET
// /v1/log/checkpoint signs; the CSV, read back with encoding/csv, starts
// with the UTF-8 byte-order mark and holds the same coupons, in the same
// order, as the JSON list. It writes the README's screenshot of the page.
func TestAuditorRecordInBrowser(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newAuditShop(e)
	ctx := browser(t, 1440)
	e.signIn(t, ctx, "auditor")
	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/lab/audit"),
		chromedp.Click(chromedp.CSS(`a[href="/lab/audit/procedures/`+shop.proc+`"]`)),
		chromedp.WaitVisible(chromedp.ID("downloads-h"))); err != nil {
		t.Fatalf("open the record view from the audit page: %v", err)
	}
	text, err := chromedp.Run(ctx, chromedp.Evaluate[string](`document.querySelector('main').textContent.replace(/\s+/g, ' ')`))
	if err != nil {
		t.Fatal(err)
	}
	contains(t, "the record view", text, append([]string{shop.code, shop.number, "Caution", "governing welding code", auditStatement,
		// The correction: voltage 21 V → 21.5 V, by whom and why; the void of section B
		// (the arrow is said in words to screen readers, so the text holds both).
		"Voltage: 21 V → changed to 21.5 V", "by lab-technician", auditCorrection, auditVoid, "Voided: no → changed to yes",
		// 200 A against 175 A ± 10 % (structural-style rule, from memory): 157.5–192.5 A.
		"200 A is above the qualified 157.5–192.5 A"}, shop.marks...)...)
	if ids := unlabelled(t, ctx); len(ids) > 0 {
		t.Errorf("inputs without a label: %v", ids)
	}
	if overflows(t, ctx) {
		t.Errorf("the record view scrolls sideways at 1440 px")
	}
	if err := chromedp.Do(ctx, chromedp.EmulateViewport(375, 900)); err != nil {
		t.Fatal(err)
	}
	if overflows(t, ctx) {
		t.Errorf("the record view scrolls sideways at 375 px")
	}
	if err := chromedp.Do(ctx, chromedp.EmulateViewport(1280, 900)); err != nil {
		t.Fatal(err)
	}

	dir := t.TempDir()
	pdf := download(t, ctx, dir, "#pdf-"+shop.number)
	checkpoint := e.raw(t, "/v1/log/checkpoint", "auditor")
	root := strings.Split(checkpoint, "\n")[2]
	printed := pdfText(t, pdf)
	contains(t, "the printed record", printed, append([]string{shop.number, root, "Caution"}, shop.marks...)...)

	sheet := download(t, ctx, dir, "#csv-coupons")
	if !bytes.HasPrefix(sheet, []byte("\xEF\xBB\xBF")) {
		t.Errorf("the CSV for a spreadsheet does not start with the UTF-8 byte-order mark")
	}
	rows, err := csv.NewReader(bytes.NewReader(bytes.TrimPrefix(sheet, []byte("\xEF\xBB\xBF")))).ReadAll()
	if err != nil {
		t.Fatalf("encoding/csv: %v", err)
	}
	list := e.call(http.MethodGet, "/v1/coupons?include_voided=true&procedure_id="+shop.proc, "auditor", nil, http.StatusOK)["items"].([]any)
	if len(rows) != len(list)+1 {
		t.Fatalf("CSV has %d rows after the header, the JSON list %d items", len(rows)-1, len(list))
	}
	col := -1
	for i, h := range rows[0] {
		if h == "coupon_mark" {
			col = i
		}
	}
	contains(t, "the CSV header", strings.Join(rows[0], ","), "current_a (A)", "travel_speed_mm_s (mm/s)")
	for i, it := range list {
		if want := it.(map[string]any)["coupon_mark"]; col < 0 || rows[i+1][col] != want {
			t.Errorf("CSV row %d: coupon_mark column %d of %q, want %v", i+1, col, rows[i+1], want)
		}
	}

	if _, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`document.querySelectorAll('details').forEach(d => { if (d.querySelector('.changes')) d.open = true }), true`)); err != nil {
		t.Fatal(err)
	}
	png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	if err := os.MkdirAll(screenshotDir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(screenshotDir, "auditor-record.png"), png, 0o644); err != nil {
		t.Fatal(err)
	}
	f := e.signedIn("auditor")
	_, html := f.get("/lab/audit/procedures/" + shop.proc)
	_, css := f.get("/lab/static/lab.css")
	_, js := f.get("/lab/static/lab.js")
	t.Logf("page weight of the record view (3 coupons): HTML %d + CSS %d + JS %d = %d bytes", len(html), len(css), len(js), len(html)+len(css)+len(js))
}

// download clicks the link selector names and returns the file the
// browser saved in dir.
func download(t *testing.T, ctx context.Context, dir, selector string) []byte {
	t.Helper()
	dctx, cancel := context.WithTimeout(ctx, 30*time.Second)
	defer cancel()
	progress := chromedp.Events(dctx, cdpbrowser.DownloadProgress)
	events := true
	if err := chromedp.Do(ctx,
		chromedp.Func(func(ctx context.Context, _ *chromedp.Target) error {
			_, err := chromedp.Call(ctx, cdpbrowser.SetDownloadBehavior, cdpbrowser.SetDownloadBehaviorParams{
				Behavior: cdpbrowser.SetDownloadBehaviorBehaviorAllowAndName, DownloadPath: dir, EventsEnabled: &events})
			return err
		}),
		chromedp.Click(chromedp.CSS(selector)),
	); err != nil {
		t.Fatalf("download %s: %v", selector, err)
	}
	for ev, err := range progress {
		if err != nil {
			t.Fatalf("download %s: %v", selector, err)
		}
		if ev.State != cdpbrowser.DownloadProgressStateCompleted {
			continue
		}
		b, err := os.ReadFile(filepath.Join(dir, ev.GUID))
		if err != nil {
			t.Fatalf("the downloaded file of %s: %v", selector, err)
		}
		return b
	}
	t.Fatalf("download %s did not complete in 30 s", selector)
	return nil
}

// raw reads an API answer as text with role's bearer token.
func (e *labEnv) raw(t *testing.T, path, role string) string {
	t.Helper()
	req, _ := http.NewRequest(http.MethodGet, e.url+path, nil)
	req.Header.Set("Authorization", "Bearer "+e.tokens[role])
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	var b bytes.Buffer
	_, _ = b.ReadFrom(res.Body)
	if res.StatusCode != http.StatusOK {
		t.Fatalf("GET %s = %d: %s", path, res.StatusCode, b.String())
	}
	return b.String()
}

// pdfText runs Debian's pdftotext (poppler-utils) over a PDF and returns
// its text with white space folded. Without the program the test skips on
// a laptop and fails in CI (.ci/setup installs it).
func pdfText(t *testing.T, pdf []byte) string {
	t.Helper()
	bin, err := exec.LookPath("pdftotext")
	if err != nil {
		if os.Getenv("CI") != "" {
			t.Fatal("pdftotext is missing: bash .ci/setup installs poppler-utils")
		}
		t.Skip("pdftotext (poppler-utils) is not installed")
	}
	path := filepath.Join(t.TempDir(), "record.pdf")
	if err := os.WriteFile(path, pdf, 0o600); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(bin, "-enc", "UTF-8", path, "-").Output()
	if err != nil {
		t.Fatalf("pdftotext: %v", err)
	}
	return strings.Join(strings.Fields(string(out)), " ")
}
