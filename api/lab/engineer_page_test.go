package lab_test

import (
	"net/http"
	"net/url"
	"regexp"
	"strings"
	"testing"
)

// TestEngineerProcedurePage reads a procedure's page over HTTP: its ranges
// with where they came from, its supporting record, its coupons, the flag
// summary with requirement flags first, the caution, and a link to the window.
func TestEngineerProcedurePage(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	f := e.signedIn("engineer")
	res, page := f.get("/lab/procedures/" + shop.proc)
	if res.StatusCode != http.StatusOK {
		t.Fatalf("GET the procedure page = %d:\n%s", res.StatusCode, page)
	}
	contains(t, "the procedure page", page, `id="caution"`, "Qualified ranges", "structural-style-gmaw", "PQR-ENG-",
		"Supporting qualification records", "ENG-", "/lab/procedures/"+shop.proc+"/window", "Requirement flags come first")
	for _, c := range shop.coupons {
		if !strings.Contains(page, "/lab/coupons/"+c) {
			t.Errorf("the procedure page does not link coupon %s", c)
		}
	}
	// The summary lists the requirement flags (two coupons under
	// the 1.9 mm required) before the range flags, and says them in sentences.
	i, j := strings.Index(page, "<strong>requirement</strong>"), strings.Index(page, "<td>range</td>")
	if i < 0 || j < 0 || j < i {
		t.Errorf("the flag summary does not list the requirement flag (at %d) before the range flags (at %d)", i, j)
	}
	contains(t, "the requirement flags", page, `id="requirement-flags"`, "1.82 mm is below the 1.9 mm that WPS-ENG-")
	res, _ = f.get("/lab/procedures/" + shop.proc + "/flags")
	if res.StatusCode != http.StatusOK {
		t.Errorf("GET the procedure's flags = %d", res.StatusCode)
	}
}

// cellRE finds the grid cells of a window chart.
var cellRE = regexp.MustCompile(`class="plot-cell[ "]`)

// TestEngineerWindowPage draws a procedure's window: one cell per grid point
// the API answered (9 × 9 by default), the nominal point, the key to the
// limit codes and the caution; a heat input limit that is not a number is
// refused next to its field.
func TestEngineerWindowPage(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	f := e.signedIn("engineer")
	// No calibration is in use and no K given: the API's refusal shows beside the K field.
	res, page := f.get("/lab/procedures/" + shop.proc + "/window?joint_type=fillet")
	if res.StatusCode != http.StatusBadRequest {
		t.Errorf("the window without a K or a calibration in use = %d, want 400", res.StatusCode)
	}
	contains(t, "the window page without a K", page, `id="f-jackson_k-why"`, "is required with min_penetration")
	e.call(http.MethodPost, "/v1/calibrations/"+shop.cal+"/activate", "engineer", map[string]any{"reason": "fixture"}, http.StatusCreated)
	res, page = f.get("/lab/procedures/" + shop.proc + "/window?joint_type=fillet&basis=median")
	if res.StatusCode != http.StatusOK {
		t.Fatalf("GET the window page = %d:\n%s", res.StatusCode, page)
	}
	ans := e.call(http.MethodPost, "/v1/parameter-window", "engineer", map[string]any{"procedure_id": shop.proc, "joint_type": "fillet", "basis": "median"}, http.StatusOK)
	cells := ans["cells"].([]any)
	if got := len(cellRE.FindAllString(page, -1)); got != len(cells) || got != 81 {
		t.Errorf("the grid has %d cells, want the API's %d (9 × 9)", got, len(cells))
	}
	contains(t, "the window page", page, `id="caution"`, `class="plot-nominal"`, "nominal ", `id="limit-key"`, "Where each limit came from")
	res, page = f.get("/lab/procedures/" + shop.proc + "/window?" + url.Values{"joint_type": {"fillet"}, "max_heat_input_j_mm": {"lots"}}.Encode())
	if res.StatusCode != http.StatusUnprocessableEntity {
		t.Errorf("a heat input limit of %q = %d, want 422", "lots", res.StatusCode)
	}
	contains(t, "the refused window form", page, "is not a number", `id="f-max_heat_input_j_mm-why"`)
}

// TestEngineerActivationNeedsEngineer: an auditor may read the calibration
// page but gets no activation form, and a posted one is refused as not for
// the role, before the API is asked.
func TestEngineerActivationNeedsEngineer(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	f := e.signedIn("auditor")
	res, page := f.get("/lab/calibrations/" + shop.cal)
	if res.StatusCode != http.StatusOK || strings.Contains(page, `id="activation"`) {
		t.Fatalf("auditor's calibration page = %d, activation form shown: %v", res.StatusCode, strings.Contains(page, `id="activation"`))
	}
	res = f.post("/lab/calibrations/"+shop.cal+"/activation", url.Values{"form_token": {formToken(t, page)}, "action": {"activate"}, "reason": {"x"}})
	if res.StatusCode != http.StatusForbidden {
		t.Errorf("an auditor's activation = %d, want 403", res.StatusCode)
	}
	if e.call(http.MethodGet, "/v1/calibrations/"+shop.cal, "auditor", nil, http.StatusOK)["active"] != false {
		t.Errorf("the auditor's post activated the calibration")
	}
}

// TestEngineerPageWeight measures what each engineer's page costs to load:
// the HTML (charts inline as SVG) and the style sheet and script it links.
// It logs the sizes (go test -run TestEngineerPageWeight -v) and fails
// only past a generous ceiling, so a page that starts pulling in more shows.
func TestEngineerPageWeight(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	e.call(http.MethodPost, "/v1/calibrations/"+shop.cal+"/activate", "engineer", map[string]any{"reason": "fixture"}, http.StatusCreated)
	f := e.signedIn("engineer")
	_, css := f.get("/lab/static/lab.css")
	_, js := f.get("/lab/static/lab.js")
	for _, p := range []struct{ name, path string }{
		{"calibration", "/lab/calibrations/" + shop.cal},
		{"procedure", "/lab/procedures/" + shop.proc},
		{"window", "/lab/procedures/" + shop.proc + "/window"},
	} {
		res, html := f.get(p.path)
		if res.StatusCode != http.StatusOK {
			t.Fatalf("GET %s = %d", p.path, res.StatusCode)
		}
		svg := 0
		for _, m := range regexp.MustCompile(`(?s)<svg.*?</svg>`).FindAllString(html, -1) {
			svg += len(m)
		}
		total := len(html) + len(css) + len(js)
		t.Logf("%s page: HTML %d bytes (of which SVG %d), CSS %d, JS %d: %d bytes in all", p.name, len(html), svg, len(css), len(js), total)
		if total > 300_000 {
			t.Errorf("the %s page weighs %d bytes, more than 300 kB", p.name, total)
		}
	}
}

// TestEngineerChartsInInchPound: with inch-pound chosen, the calibration's
// charts and the window's grid give penetration in in and travel speed in
// in/min on their axes.
func TestEngineerChartsInInchPound(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	e.call(http.MethodPost, "/v1/calibrations/"+shop.cal+"/activate", "engineer", map[string]any{"reason": "fixture"}, http.StatusCreated)
	f := e.signedIn("engineer")
	_, page := f.get("/lab/calibrations/" + shop.cal)
	if res := f.post("/lab/units", url.Values{"form_token": {formToken(t, page)}, "units": {"inch-pound"}, "back": {"/lab/"}}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("choose inch-pound = %d, want 303", res.StatusCode)
	}
	_, page = f.get("/lab/calibrations/" + shop.cal)
	contains(t, "the calibration page in inch-pound", page, "measured penetration, in", "travel speed, in/min")
	_, page = f.get("/lab/procedures/" + shop.proc + "/window?joint_type=fillet&basis=median")
	contains(t, "the window page in inch-pound", page, "travel speed, in/min", `name="max_heat_input_kj_in"`)
}

// TestEngineerLesnewichCalibrationPage: a Lesnewich fit's page charts the
// melting rate, measured against predicted and the residuals against current
// and electrode extension, one marker per coupon; it states no exponent
// test; the calibration list links it.
func TestEngineerLesnewichCalibrationPage(t *testing.T) {
	t.Parallel()
	e := newLabEnv(t)
	shop := newEngineerShop(e)
	cal := e.call(http.MethodPost, "/v1/calibrations", "engineer", map[string]any{"model": "lesnewich", "process": "GMAW",
		"wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2", "joint_type": "fillet", "procedure_id": shop.proc, "arc_length_mm": 3.0},
		http.StatusCreated)["id"].(string)
	f := e.signedIn("engineer")
	res, page := f.get("/lab/calibrations/" + cal)
	if res.StatusCode != http.StatusOK {
		t.Fatalf("GET the lesnewich calibration page = %d:\n%s", res.StatusCode, page)
	}
	contains(t, "the lesnewich calibration page", page, `id="measured-predicted"`, `id="residuals-current_a"`, `id="residuals-extension_mm"`,
		"measured melting rate, kg/h", "electrode extension (stick-out), mm", `id="caution"`)
	if got := strings.Count(page, `class="plot-point"`); got != 3*len(shop.coupons) {
		t.Errorf("%d markers on three charts, want %d", got, 3*len(shop.coupons))
	}
	if strings.Contains(page, `id="exponent-test"`) {
		t.Errorf("a lesnewich fit states an exponent test")
	}
	_, list := f.get("/lab/calibrations")
	contains(t, "the calibration list", list, "/lab/calibrations/"+cal, "/lab/calibrations/"+shop.cal, "lesnewich", "jackson_free")
}
