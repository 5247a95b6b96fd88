package lab_test

import (
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// TestImportInBrowser uploads a coupon file with bad rows in real Chromium:
// the check names each bad row by row, column and reason and writes
// nothing; the import writes the good coupon; the same file sent again in
// parts by the page's script (as a file above one request's limit is) shows
// its progress, writes nothing new and names the same rows.
func TestImportInBrowser(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	proc := e.call(http.MethodPost, "/v1/procedures", "engineer", map[string]any{
		"code": "WPS-IMP-1", "title": "Fillet welds, carbon steel", "process": "GMAW", "filler_classification": "ER70S-6",
		"wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2", "polarity": "DCEP", "transfer_mode": "short_circuit",
		"positions": []string{"2F"}, "base_metal_group": "carbon steel", "thickness_min_mm": 3.0, "thickness_max_mm": 12.0,
		"status": "draft", "supporting_record_ids": []string{},
	}, http.StatusCreated)["id"].(string)
	// Plausible fillet coupons (fixtures), thickness in inches; rows 4 and 5 are bad.
	file := "procedure_id,coupon_mark,welder_id,welded_on,joint_type,thickness_in,pass_number,current_a,voltage_v,travel_speed_mm_s,position,section,penetration_mm,bead_width_mm,reinforcement_mm,acceptance,inspector\n" +
		proc + ",LAB-1,W-1,2026-11-03,fillet,0.25,1,180,21,5,2F,A,1.5,7,1,accept,QC\n" +
		proc + ",LAB-1,W-1,2026-11-03,fillet,0.25,1,180,21,5,2F,B,1.6,7,1,accept,QC\n" +
		proc + ",LAB-2,W-1,2026-11-03,fillet,0.25,1,1800,21,5,2F,A,1.5,7,1,accept,QC\n" +
		proc + ",LAB-3,W-1,2026-11-03,fillet,0.25,1,180,21,5,2F,A,1.5,7,1,maybe,QC\n"
	path := filepath.Join(t.TempDir(), "coupons.csv")
	if err := os.WriteFile(path, []byte(file), 0o600); err != nil {
		t.Fatal(err)
	}
	// The domain primer's plausible current is 10–1,000 A; acceptance is accept or reject.
	wantRows := []string{
		"4 current_a 1800 A is above the plausible maximum 1000 A",
		"5 acceptance must be one of: accept reject (got maybe)",
	}
	ctx := browser(t, 1280)
	e.signIn(t, ctx, "technician")
	refused := func() []string {
		rows, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('#refused tbody tr'),
			tr => Array.from(tr.cells, c => c.textContent.trim()).join(' '))`))
		if err != nil {
			t.Fatal(err)
		}
		return rows
	}
	summary := func() string {
		s, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("summary")))
		if err != nil {
			t.Fatal(err)
		}
		return strings.Join(strings.Fields(s), " ")
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/lab/import"), chromedp.WaitVisible(chromedp.ID("import-file")),
		chromedp.SetUploadFiles(chromedp.ID("import-file"), []string{path}), chromedp.Click(chromedp.ID("check")),
		chromedp.WaitVisible(chromedp.ID("report"))); err != nil {
		t.Fatalf("check the file: %v", err)
	}
	if got := refused(); strings.Join(got, "\n") != strings.Join(wantRows, "\n") {
		t.Errorf("the check shows refused rows\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(wantRows, "\n"))
	}
	contains(t, "the check's summary", summary(), "4 rows, 3 coupons: 1 new to import with 2 sections, 0 already stored unchanged, 2 refused")
	if got := e.call(http.MethodGet, "/v1/coupons?coupon_mark=LAB-1", "auditor", nil, http.StatusOK)["items"].([]any); len(got) != 0 {
		t.Errorf("the check stored LAB-1")
	}
	if ids := unlabelled(t, ctx); len(ids) > 0 {
		t.Errorf("inputs without a label: %v", ids)
	}

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.ID("commit")), chromedp.WaitVisible(chromedp.CSS(`#report[data-mode="commit"]`))); err != nil {
		t.Fatalf("import the file: %v", err)
	}
	contains(t, "the import's summary", summary(), "1 new written with 2 sections", "2 refused")
	got := e.call(http.MethodGet, "/v1/coupons?coupon_mark=LAB-1", "auditor", nil, http.StatusOK)["items"].([]any)
	if len(got) != 1 || got[0].(map[string]any)["thickness_mm"] != 6.35 { // 0.25 in × 25.4 mm/in (NIST SP 811, Appendix B)
		t.Errorf("after the import LAB-1 reads %v, want one coupon 6.35 mm thick", got)
	}

	// Again, as a large file: the script sends one part per coupon.
	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/lab/import"), chromedp.WaitVisible(chromedp.ID("import-file")),
		chromedp.SetAttributeValue(chromedp.ID("import-form"), "data-limit", "1"),
		chromedp.SetAttributeValue(chromedp.ID("import-form"), "data-part-size", "1"),
		chromedp.SetUploadFiles(chromedp.ID("import-file"), []string{path}), chromedp.Click(chromedp.ID("check")),
		chromedp.WaitVisible(chromedp.ID("report"))); err != nil {
		t.Fatalf("check the file in parts: %v", err)
	}
	if got := refused(); strings.Join(got, "\n") != strings.Join(wantRows, "\n") {
		t.Errorf("the check in parts shows refused rows\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(wantRows, "\n"))
	}
	contains(t, "the summary of the check in parts", summary(), "4 rows, 3 coupons: 0 new to import with 0 sections, 1 already stored unchanged, 2 refused")
	progress, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("import-count")))
	if err != nil || progress != "4 of 4 rows" {
		t.Errorf("the progress reads %q (%v), want 4 of 4 rows", progress, err)
	}

	// New coupons committed in parts, two in flight; then a file whose
	// coupon LAB-7 has rows in its first part and its last, sent one part
	// at a time, as it would be one after the other: LAB-7 is created by
	// the first, and the last, finding it stored with other sections,
	// refuses its row (a stored coupon is never changed by an import).
	row := func(mark, section string) string {
		return proc + "," + mark + ",W-1,2026-11-04,fillet,0.25,1,180,21,5,2F," + section + ",1.5,7,1,accept,QC\n"
	}
	head := file[:strings.Index(file, "\n")+1]
	for _, c := range []struct {
		name, body, summary string
		want                map[string]int // sections per mark
	}{
		{"new coupons", head + row("LAB-4", "A") + row("LAB-5", "A") + row("LAB-6", "A") + row("LAB-6", "B"),
			"3 new written with 4 sections", map[string]int{"LAB-4": 1, "LAB-5": 1, "LAB-6": 2}},
		{"a coupon in two parts", head + row("LAB-7", "A") + row("LAB-8", "A") + row("LAB-7", "B"),
			"2 new written with 2 sections, 0 already stored unchanged, 1 refused", map[string]int{"LAB-7": 1, "LAB-8": 1}},
	} {
		p := filepath.Join(t.TempDir(), "more.csv")
		if err := os.WriteFile(p, []byte(c.body), 0o600); err != nil {
			t.Fatal(err)
		}
		if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/lab/import"), chromedp.WaitVisible(chromedp.ID("import-file")),
			chromedp.SetAttributeValue(chromedp.ID("import-form"), "data-limit", "1"),
			chromedp.SetAttributeValue(chromedp.ID("import-form"), "data-part-size", "1"),
			chromedp.SetUploadFiles(chromedp.ID("import-file"), []string{p}), chromedp.Click(chromedp.ID("check")),
			chromedp.WaitVisible(chromedp.ID("commit")), chromedp.Click(chromedp.ID("commit")),
			chromedp.WaitVisible(chromedp.CSS(`#report[data-mode="commit"]`))); err != nil {
			t.Fatalf("%s: import in parts: %v", c.name, err)
		}
		contains(t, c.name+": the import's summary", summary(), c.summary)
		for mark, n := range c.want {
			got := e.call(http.MethodGet, "/v1/coupons?coupon_mark="+mark, "auditor", nil, http.StatusOK)["items"].([]any)
			if len(got) != 1 {
				t.Errorf("%s: %d coupons marked %s, want 1", c.name, len(got), mark)
				continue
			}
			id := got[0].(map[string]any)["id"].(string)
			secs := e.call(http.MethodGet, "/v1/measurements?coupon_id="+id, "auditor", nil, http.StatusOK)["items"].([]any)
			if len(secs) != n {
				t.Errorf("%s: %s has %d sections, want %d", c.name, mark, len(secs), n)
			}
		}
	}
}
