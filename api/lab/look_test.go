package lab_test

import (
	"math"
	"net/http"
	"os"
	"regexp"
	"strconv"
	"testing"
)

// luminance is the relative luminance of an sRGB colour #rrggbb (WCAG 2.1,
// "relative luminance": linearise each channel, then 0.2126 R + 0.7152 G + 0.0722 B).
func luminance(t *testing.T, hex string) float64 {
	t.Helper()
	if len(hex) != 7 {
		t.Fatalf("colour %q is not #rrggbb", hex)
	}
	var lin [3]float64
	for i := range 3 {
		v, err := strconv.ParseUint(hex[1+2*i:3+2*i], 16, 8)
		if err != nil {
			t.Fatal(err)
		}
		c := float64(v) / 255
		if c <= 0.03928 {
			lin[i] = c / 12.92
		} else {
			lin[i] = math.Pow((c+0.055)/1.055, 2.4)
		}
	}
	return 0.2126*lin[0] + 0.7152*lin[1] + 0.0722*lin[2]
}

// contrast is the WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05).
func contrast(t *testing.T, a, b string) float64 {
	la, lb := luminance(t, a), luminance(t, b)
	return (math.Max(la, lb) + 0.05) / (math.Min(la, lb) + 0.05)
}

// TestStyleContrast reads the colours of static/lab.css and checks every
// text-on-background pairing the sheet uses against WCAG 2.1 AA (4.5:1 for
// normal text, success criterion 1.4.3). The formula's reference values:
// black on white is 21:1, white on white 1:1.
func TestStyleContrast(t *testing.T) {
	t.Parallel()
	if r := contrast(t, "#000000", "#ffffff"); math.Abs(r-21) > 1e-9 {
		t.Fatalf("contrast(black, white) = %v, want 21 (WCAG 2.1)", r)
	}
	css, err := os.ReadFile("static/lab.css")
	if err != nil {
		t.Fatal(err)
	}
	vars := map[string]string{"white": "#ffffff"}
	for _, m := range regexp.MustCompile(`--([a-z-]+):\s*(#[0-9a-fA-F]{6});`).FindAllStringSubmatch(string(css), -1) {
		vars[m[1]] = m[2]
	}
	for _, p := range []struct{ text, on string }{
		{"ink", "paper"}, {"muted", "paper"}, {"link", "paper"}, {"refused", "paper"}, {"refused", "refused-bg"},
		{"ok", "paper"}, {"caution", "caution-bg"}, {"white", "slate"}, {"white", "caution"}, {"ink", "band"},
		{"muted", "white"}, {"slate", "white"}, {"ink", "white"},
	} {
		a, b := vars[p.text], vars[p.on]
		if a == "" || b == "" {
			t.Errorf("lab.css has no colour --%s or --%s", p.text, p.on)
			continue
		}
		if r := contrast(t, a, b); r < 4.5 {
			t.Errorf("--%s %s on --%s %s: contrast %.2f:1, want at least 4.5:1 (WCAG 2.1 AA)", p.text, a, p.on, b, r)
		}
	}
}

// TestPageWeight logs the bytes a browser loads for each main technician
// page (HTML, CSS and JS; the pages load no images or fonts).
// Run: go test ./api/lab/ -run TestPageWeight -v
func TestPageWeight(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	proc, _ := e.rangedProcedure()
	id := e.call(http.MethodPost, "/v1/coupons", "technician", couponBody(proc, uniq("C-W")), http.StatusCreated)["id"].(string)
	e.call(http.MethodPost, "/v1/coupons/"+id+"/measurements", "technician", map[string]any{
		"section": "A", "penetration_mm": 2.0, "bead_width_mm": 9.0, "reinforcement_mm": 1.0, "acceptance": "accept", "inspector": "QC-3",
	}, http.StatusCreated)
	f := e.signedIn("technician")
	_, css := f.get("/lab/static/lab.css")
	_, js := f.get("/lab/static/lab.js")
	for _, p := range []string{"/lab/", "/lab/coupons", "/lab/coupons/new?procedure_id=" + proc, "/lab/coupons/" + id} {
		res, page := f.get(p)
		if res.StatusCode != http.StatusOK {
			t.Fatalf("GET %s = %d", p, res.StatusCode)
		}
		t.Logf("%-60s HTML %6d + CSS %5d + JS %4d = %6d bytes", p, len(page), len(css), len(js), len(page)+len(css)+len(js))
	}
}
