package lab_test

import (
	"fmt"
	"math"
	"net/http"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// TestNextCouponsAndDriftInBrowser activates the engineer shop's fit, then
// records eighteen coupons on three power sources, PS-3's made 80 % deeper
// than the law from its second coupon on (fixture values). In real
// Chromium the procedure's next-coupons page proposes three coupons inside
// the qualified current range (157.5–192.5 A: ±10 % of the PQR's 175 A,
// the structural-style set, from memory) on 5 A steps, and draws one drift
// chart per split with two markers a coupon, each linked to its coupon;
// PS-3's chart is out and says, in words, to check the machine's
// calibration, while PS-1's is not.
func TestNextCouponsAndDriftInBrowser(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	e.call(http.MethodPost, "/v1/calibrations/"+shop.cal+"/activate", "engineer", map[string]any{"reason": "fixture"}, http.StatusCreated)
	current := []float64{160, 190, 170, 185, 165, 195}
	voltage := []float64{19.5, 20, 21.5, 19, 21, 20.5}
	speed := []float64{4.5, 5.5, 4.8, 6, 5.2, 4.2}
	n := engineerSeq.Add(1)
	for i := 0; i < 18; i++ {
		ps := fmt.Sprintf("PS-%d", 1+i%3)
		k := i % len(current)
		c := e.call(http.MethodPost, "/v1/coupons", "technician", map[string]any{
			"procedure_id": shop.proc, "coupon_mark": fmt.Sprintf("DRIFT-%d-%02d", n, i+1), "welder_id": fmt.Sprintf("W-%d", i/3%2),
			"power_source_id": ps, "filler_lot": "L1", "welded_on": fmt.Sprintf("2026-10-%02d", 1+i), "joint_type": "fillet",
			"thickness_mm": 9.5, "pass_number": 1, "current_a": current[k], "voltage_v": voltage[k], "travel_speed_mm_s": speed[k],
			"position": "2F",
		}, http.StatusCreated)["id"].(string)
		pen := jacksonFixtureK * math.Pow(current[k], 4.0/3) * math.Pow(speed[k], -1.0/3) * math.Pow(voltage[k], -2.0/3)
		if ps == "PS-3" && i >= 5 {
			pen *= 1.8
		}
		e.call(http.MethodPost, "/v1/coupons/"+c+"/measurements", "technician", map[string]any{
			"section": "A", "penetration_mm": math.Round(pen*100) / 100, "bead_width_mm": 7.0, "reinforcement_mm": 1.0,
			"acceptance": "accept", "inspector": "QC-1"}, http.StatusCreated)
	}
	ctx := browser(t, 1280)
	e.signIn(t, ctx, "engineer")
	// The procedure page links to the group's next-coupons page; the link is
	// followed with Navigate, which returns once the page has loaded (after
	// a click, a query could still reach the procedure page's document and
	// fail with "No node with given id found" when the new one replaced it).
	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+"/lab/procedures/"+shop.proc)); err != nil {
		t.Fatal(err)
	}
	link, err := chromedp.Run(ctx, chromedp.AttributeValue(chromedp.ID("next-coupons-link"), "href"))
	if err != nil || !link.Exists {
		t.Fatalf("the procedure page's next-coupons link: %v (href found: %v)", err, link.Exists)
	}
	if want := "/lab/procedures/" + shop.proc + "/next-coupons"; link.Value != want {
		t.Fatalf("the procedure page links to %q, want %q", link.Value, want)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(e.url+link.Value), chromedp.WaitVisible(chromedp.ID("proposals"))); err != nil {
		t.Fatalf("open the next-coupons page from the procedure: %v", err)
	}
	caution, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("caution")))
	if err != nil {
		t.Fatal(err)
	}
	contains(t, "the caution", caution, "estimates", "governing welding code")
	currents, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('#proposals tr.proposal td:nth-child(2)'), td => td.textContent)`))
	if err != nil {
		t.Fatal(err)
	}
	if len(currents) != 3 {
		t.Fatalf("%d proposals, want 3: %v", len(currents), currents)
	}
	for _, c := range currents {
		var a float64
		if _, err := fmt.Sscanf(strings.TrimSpace(c), "%g", &a); err != nil || a < 157.5 || a > 192.5 || math.Mod(a, 5) != 0 {
			t.Errorf("proposed current %q: want a multiple of 5 A within 157.5–192.5 A", c)
		}
	}
	type fig struct {
		Heading, Signal, Advice string
		Points                  int
		Links                   int
	}
	figs, err := chromedp.Run(ctx, chromedp.Evaluate[[]fig](`Array.from(document.querySelectorAll('figure.drift'), f => ({
		Heading: f.querySelector('figcaption strong').textContent,
		Signal: (f.querySelector('.drift-signal') || {textContent: ''}).textContent,
		Advice: (f.querySelector('.drift-advice') || {textContent: ''}).textContent,
		Points: f.querySelectorAll('svg .drift-point').length,
		Links: Array.from(f.querySelectorAll('svg .drift-point')).filter(g => (g.closest('a') || {getAttribute: () => ''}).getAttribute('href').startsWith('/lab/coupons/')).length}))`))
	if err != nil {
		t.Fatal(err)
	}
	seen := map[string]fig{}
	for _, f := range figs {
		seen[strings.TrimSuffix(f.Heading, ".")] = f
		if f.Points == 0 || f.Links != f.Points {
			t.Errorf("%s: %d markers, %d linked to a coupon; want every marker linked", f.Heading, f.Points, f.Links)
		}
	}
	ps3, ps1 := seen["Drift of power source PS-3"], seen["Drift of power source PS-1"]
	if ps3.Signal == "" || !strings.Contains(ps3.Advice, "check the machine's calibration") || ps3.Points != 12 {
		t.Errorf("PS-3 chart: %+v; want out of control with 6 coupons and the advice to check the machine", ps3)
	}
	if ps1.Points != 12 || ps1.Signal != "" {
		t.Errorf("PS-1 chart: %+v; want 6 coupons in control", ps1)
	}
	if ids := unlabelled(t, ctx); len(ids) > 0 {
		t.Errorf("inputs without a label: %v", ids)
	}
}
