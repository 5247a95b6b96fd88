package api_test

import (
	"math"
	"net/http"
	"strings"
	"testing"
)

// predictionReply is the part of a prediction answer the tests read.
type predictionReply struct {
	Penetration struct {
		Source         string   `json:"source"`
		Model          string   `json:"model"`
		CalibrationID  string   `json:"calibration_id"`
		JacksonKInch   float64  `json:"jackson_k_inch"`
		JacksonKMetric float64  `json:"jackson_k_metric"`
		PenetrationMM  *float64 `json:"penetration_mm"`
		PenetrationIn  *float64 `json:"penetration_in"`
		Interval       *struct {
			PredLowMM  float64 `json:"pred_low_mm"`
			PredHighMM float64 `json:"pred_high_mm"`
		} `json:"prediction_interval"`
	} `json:"penetration"`
	WireFeed *struct {
		MeltingRateLbH    float64 `json:"melting_rate_lb_h"`
		DepositionRateKgH float64 `json:"deposition_rate_kg_h"`
		DepositAreaMM2    float64 `json:"deposit_area_mm2"`
	} `json:"wire_feed"`
	Lesnewich *struct {
		Source            string  `json:"source"`
		MeltingRateKgH    float64 `json:"melting_rate_kg_h"`
		DepositionRateKgH float64 `json:"deposition_rate_kg_h"`
	} `json:"lesnewich"`
	ArcEnergyKJIn float64 `json:"arc_energy_kj_in"`
	HeatInput     []struct {
		Form, Process string
		Factor        float64 `json:"factor"`
		HeatInputJMM  float64 `json:"heat_input_j_mm"`
	} `json:"heat_input"`
	Notes   []string `json:"notes"`
	Caution string   `json:"caution"`
}

// predictAs posts a what-if as the auditor and decodes the 200 answer.
func (e *testEnv) predictAs(body map[string]any) predictionReply {
	e.t.Helper()
	return decode[predictionReply](e.t, "POST /v1/predictions", e.do(http.MethodPost, "/v1/predictions", "auditor", body), http.StatusOK)
}

// TestWhatIfTradeCheck sends a setting in inch units through the HTTP
// boundary and checks the values a shop would check by hand.
func TestWhatIfTradeCheck(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	got := e.predictAs(map[string]any{
		"current_a": 150, "voltage_v": 23, "travel_speed_in_min": 10,
		"wire_feed_speed_in_min": 300, "wire_diameter_in": 0.035, "deposition_efficiency": 0.95,
		"jackson_k": map[string]any{"value": 0.0019, "units": "inch"}, "process": "GMAW",
		"shielding_gas": "Ar-25CO2", "joint_type": "fillet",
	})
	p := got.Penetration
	// Common practice, no source: K = 0.0019 (inch units) at 150 A, 23 V,
	// 10 in/min gives about 0.087 in of penetration.
	if p.PenetrationIn == nil || math.Abs(*p.PenetrationIn-0.087) > 0.0005 || p.Source != "request" || p.JacksonKInch != 0.0019 {
		t.Errorf("penetration = %v in from %s K %v (inch), want about 0.087 in from the request's K 0.0019", p.PenetrationIn, p.Source, p.JacksonKInch)
	}
	// Each figure carries 12 significant digits, so they agree to about 1e-11.
	if p.PenetrationMM == nil || !relClose(*p.PenetrationMM, *p.PenetrationIn*25.4, 1e-11) {
		t.Errorf("penetration = %v mm, want %v in × 25.4 (NIST SP 811: 1 in = 25.4 mm)", p.PenetrationMM, p.PenetrationIn)
	}
	// Heat input H = 60·V·I/S J/in with S in in/min, the code formula for
	// non-waveform welding (ASME IX QW-409.1, from memory): 20.7 kJ/in.
	if !relClose(got.ArcEnergyKJIn, 20.7, 1e-12) {
		t.Errorf("arc energy = %v kJ/in, want 60·23·150/10 J/in = 20.7 kJ/in", got.ArcEnergyKJIn)
	}
	// Mass balance in inch units with the handbook density 0.2836 lb/in³
	// (from memory): 300 in/min · 60 · π/4 · 0.035² in² · 0.2836 lb/in³. The
	// service uses 7.85 g/cm³, the same handbook figure rounded in SI (0.05 % apart).
	want := 300 * 60 * math.Pi / 4 * 0.035 * 0.035 * 0.2836
	if got.WireFeed == nil || !relClose(got.WireFeed.MeltingRateLbH, want, 1e-3) {
		t.Errorf("wire feed = %+v, want a melting rate of %.4g lb/h within 0.1 %%", got.WireFeed, want)
	}
	// Thermal efficiency of GMAW k = 0.8 (EN 1011-1, from memory) is the only
	// thermal_efficiency form when the process is given.
	forms := map[string]float64{}
	for _, h := range got.HeatInput {
		forms[h.Form+"/"+h.Process] = h.Factor
	}
	if len(forms) != 2 || forms["arc_energy/"] != 1 || forms["thermal_efficiency/GMAW"] != 0.8 {
		t.Errorf("heat input forms = %v, want arc_energy (1) and thermal_efficiency GMAW (0.8)", forms)
	}
	if got.Caution == "" || len(got.Notes) == 0 {
		t.Errorf("caution %q, notes %v; want a caution and notes on what was left out", got.Caution, got.Notes)
	}
}

// TestPredictionBadInput checks that refused requests name the field.
func TestPredictionBadInput(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	base := map[string]any{"current_a": 180, "voltage_v": 21, "travel_speed_mm_s": 5}
	with := func(kv ...any) map[string]any {
		b := clone(base)
		for i := 0; i < len(kv); i += 2 {
			if kv[i+1] == nil {
				delete(b, kv[i].(string))
			} else {
				b[kv[i].(string)] = kv[i+1]
			}
		}
		return b
	}
	for _, tc := range []struct {
		name   string
		body   map[string]any
		status int
		field  string
	}{
		{"ErrNegativeCurrent", with("current_a", -5), http.StatusUnprocessableEntity, "current_a"},
		{"ErrTravelSpeedTwice", with("travel_speed_in_min", 12), http.StatusBadRequest, "travel_speed_in_min"},
		{"ErrNoTravelSpeed", with("travel_speed_mm_s", nil), http.StatusBadRequest, "travel_speed_mm_s"},
		{"ErrUnknownField", with("amps", 180), http.StatusBadRequest, "amps"},
		{"ErrKUnits", with("jackson_k", map[string]any{"value": 0.02, "units": "furlong"}), http.StatusUnprocessableEntity, "jackson_k.units"},
		{"ErrKZero", with("jackson_k", map[string]any{"value": 0, "units": "metric"}), http.StatusUnprocessableEntity, "jackson_k.value"},
		{"ErrLevel", with("level", 1.5), http.StatusUnprocessableEntity, "level"},
		{"ErrEfficiency", with("deposition_efficiency", 1.2), http.StatusUnprocessableEntity, "deposition_efficiency"},
		{"ErrGroupWithoutJoint", with("process", "GMAW", "wire_diameter_mm", 0.9), http.StatusBadRequest, "joint_type"},
		{"ErrArcLongerThanCTWD", with("ctwd_mm", 12, "arc_length_mm", 14), http.StatusUnprocessableEntity, "arc_length_mm"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			wantProblem(t, tc.name, e.do(http.MethodPost, "/v1/predictions", "auditor", tc.body), tc.status, tc.field)
		})
	}
}

// TestPredictionUsesActiveCalibration checks the order of coefficients: a
// K the request sends is used exactly (the answer says so, and names the
// calibration it passed over); without one, the group's calibration in use,
// with an interval. Per group the latest activation wins whatever its kind,
// and a deactivation leaves none.
func TestPredictionUsesActiveCalibration(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(6, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	body := fitGroupBody()
	body["current_a"], body["voltage_v"], body["travel_speed_mm_s"] = 170, 20, 4.5
	withK := clone(body)
	withK["jackson_k"] = map[string]any{"value": 0.0019, "units": "inch"}
	if got := e.predictAs(withK); got.Penetration.Source != "request" || got.Penetration.Interval != nil {
		t.Errorf("before activation: source %s, interval %v; want the request's K without an interval", got.Penetration.Source, got.Penetration.Interval)
	}
	e.create("/v1/calibrations/"+cal.ID+"/activate", "engineer", map[string]any{"reason": "fixture"})
	got := e.predictAs(body)
	fit := e.storedFit(cal.ID)
	want, err := fit.Penetration.Predict(170, 20, 4.5, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	p := got.Penetration
	if p.Source != "calibration" || p.CalibrationID != cal.ID || p.PenetrationMM == nil || *p.PenetrationMM != answered(want.MedianMM) ||
		p.Interval == nil || p.Interval.PredLowMM != answered(want.PredLowMM) || p.JacksonKMetric != answered(fit.Penetration.KMM) {
		t.Errorf("after activation: %+v, want calibration %s with median %v, PI low %v and K %v", p, cal.ID, answered(want.MedianMM), answered(want.PredLowMM), answered(fit.Penetration.KMM))
	}
	// The explicit K still wins: a what-if asks about exactly those coefficients.
	if got := e.predictAs(withK); got.Penetration.Source != "request" || got.Penetration.JacksonKInch != 0.0019 ||
		!strings.Contains(strings.Join(got.Notes, " "), cal.ID) {
		t.Errorf("explicit K with a calibration active: source %s, K %v in, notes %v; want the request's K and a note naming %s",
			got.Penetration.Source, got.Penetration.JacksonKInch, got.Notes, cal.ID)
	}
	// The latest activation wins, whatever its kind: free, then fixed again.
	free := e.fit(calibrationBody("jackson_free", nil))
	e.create("/v1/calibrations/"+free.ID+"/activate", "engineer", map[string]any{"reason": "fixture"})
	if got := e.predictAs(body); got.Penetration.CalibrationID != free.ID || got.Penetration.Model != "jackson_free" {
		t.Errorf("free activated last: penetration from %s (%s), want the jackson_free calibration %s", got.Penetration.CalibrationID, got.Penetration.Model, free.ID)
	}
	e.create("/v1/calibrations/"+cal.ID+"/activate", "engineer", map[string]any{"reason": "the engineer prefers the published exponents"})
	if got := e.predictAs(body); got.Penetration.CalibrationID != cal.ID || got.Penetration.Model != "jackson_fixed" {
		t.Errorf("fixed activated last: penetration from %s (%s), want the jackson_fixed calibration %s", got.Penetration.CalibrationID, got.Penetration.Model, cal.ID)
	}
	// Deactivating one not in use is refused; the one in use leaves the group without.
	r := e.do(http.MethodPost, "/v1/calibrations/"+free.ID+"/deactivate", "engineer", map[string]any{"reason": "not in use"})
	wantProblem(t, "deactivate a calibration not in use", r, http.StatusConflict, "")
	d := e.create("/v1/calibrations/"+cal.ID+"/deactivate", "engineer", map[string]any{"reason": "new wire supplier"})
	if d["action"] != "deactivate" {
		t.Errorf("deactivation answer %v, want action deactivate", d)
	}
	if got := e.predictAs(body); got.Penetration.Source != "none" {
		t.Errorf("after deactivation: source %s, want none", got.Penetration.Source)
	}
	for _, id := range []string{cal.ID, free.ID} {
		if c := e.do(http.MethodGet, "/v1/calibrations/"+id, "auditor", nil).object(t); c["active"] != false {
			t.Errorf("calibration %s active = %v after the deactivation, want false", id, c["active"])
		}
	}
}
