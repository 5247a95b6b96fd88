package api_test

import (
	"fmt"
	"math"
	"net/http"
	"strings"
	"testing"
)

// planReply is the part of a proposals answer these tests read.
type planReply struct {
	StartingDesign bool     `json:"starting_design"`
	CouponsUsed    int      `json:"coupons_used"`
	ResidualSD     *float64 `json:"residual_sd"`
	Proposals      []struct {
		CurrentA     float64  `json:"current_a"`
		VoltageV     float64  `json:"voltage_v"`
		SpeedS       float64  `json:"travel_speed_mm_s"`
		CTWDMM       *float64 `json:"ctwd_mm"`
		Coefficients []struct {
			Term   string   `json:"term"`
			Ratio  float64  `json:"ratio"`
			Before *float64 `json:"std_err_before"`
			After  *float64 `json:"std_err_after"`
		} `json:"coefficients"`
	} `json:"proposals"`
	Target *struct {
		CurrentA     float64  `json:"current_a"`
		PredSDBefore *float64 `json:"prediction_sd_before"`
		PredSDAfter  *float64 `json:"prediction_sd_after"`
	} `json:"target"`
	Caution string `json:"caution"`
}

// TestCouponProposals: the group's fit coupons give a free-exponent fit, so
// the answer is D-optimal proposals inside the procedure's qualified
// current range (252–308 A from the structural-style set, from memory), on
// the 5 A step, each shrinking every coefficient's standard error, and a
// target coupon that narrows the prediction at the production setting.
// Without coupons in the group (lesnewich, no wire feed data elsewhere) the
// answer is a starting design. A technician may not plan.
func TestCouponProposals(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(8, 0)
	proc := e.rangedProcedure()
	body := map[string]any{"procedure_id": proc, "joint_type": "fillet", "model": "jackson_free", "count": 2,
		"current_step_a": 5, "voltage_step_v": 0.5, "at": map[string]any{"current_a": 280, "voltage_v": 29, "travel_speed_mm_s": 6}}
	got := decode[planReply](t, "proposals", e.do(http.MethodPost, "/v1/coupon-plans/proposals", "engineer", body), http.StatusOK)
	if got.StartingDesign || got.CouponsUsed != 8 || got.ResidualSD == nil || len(got.Proposals) != 2 || got.Target == nil || got.Caution == "" {
		t.Fatalf("answer %+v; want 2 proposals from 8 coupons with a fit, a target and a caution", got)
	}
	for _, p := range got.Proposals {
		if p.CurrentA < 252 || p.CurrentA > 308 || math.Mod(p.CurrentA, 5) != 0 || math.Abs(p.VoltageV*2-math.Round(p.VoltageV*2)) > 1e-9 {
			t.Errorf("proposal %+v outside 252–308 A or off the 5 A / 0.5 V steps", p)
		}
		for _, c := range p.Coefficients {
			if !(c.Ratio < 1) || c.Before == nil || c.After == nil || !(*c.After < *c.Before) {
				t.Errorf("%s: ratio %g, SE %v → %v; want a shrink", c.Term, c.Ratio, c.Before, c.After)
			}
		}
	}
	if !(*got.Target.PredSDAfter < *got.Target.PredSDBefore) {
		t.Errorf("target %+v does not narrow the prediction", got.Target)
	}
	les := map[string]any{"procedure_id": proc, "joint_type": "butt", "model": "lesnewich", "arc_length_mm": 3,
		"ctwd_mm": map[string]any{"min": 12, "max": 20}, "ctwd_step_mm": 1}
	start := decode[planReply](t, "starting design", e.do(http.MethodPost, "/v1/coupon-plans/proposals", "engineer", les), http.StatusOK)
	if !start.StartingDesign || len(start.Proposals) != 6 || start.Proposals[0].CTWDMM == nil || *start.Proposals[0].CTWDMM != 12 {
		t.Errorf("no butt coupons: %+v; want a 2² factorial with 2 centre points, CTWD from 12 mm", start)
	}
	wantProblem(t, "technician", e.do(http.MethodPost, "/v1/coupon-plans/proposals", "technician", body), http.StatusForbidden, "")
	delete(body, "model")
	wantProblem(t, "no model", e.do(http.MethodPost, "/v1/coupon-plans/proposals", "engineer", body), http.StatusBadRequest, "model")
	body["model"], body["current_step_a"] = "jackson_free", 500
	wantProblem(t, "step", e.do(http.MethodPost, "/v1/coupon-plans/proposals", "engineer", body), http.StatusUnprocessableEntity, "current_step_a")
}

// driftReply is the part of a drift answer these tests read.
type driftReply struct {
	Charts []struct {
		Split  string `json:"split"`
		Value  string `json:"value"`
		Points []any  `json:"points"`
		Signal *struct {
			Direction string  `json:"direction"`
			Shift     float64 `json:"shift"`
		} `json:"signal"`
		Advice string `json:"advice"`
	} `json:"charts"`
}

// TestDriftCharts: after a calibration is activated, power source PS-3's
// coupons come out 20 % deeper; its chart signals above, with the advice to
// check the machine, the other power sources' do not, and the drift flag is
// listed with the others.
func TestDriftCharts(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(8, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	e.create("/v1/calibrations/"+cal.ID+"/activate", "engineer", map[string]any{"reason": "shop fit"})
	proc := e.mustProcedure()
	for i := 0; i < 24; i++ {
		b := couponBody(proc, "", uniq("C-DRIFT"))
		cur, v, s := 150+10*float64(i%5), 19+float64(i%3), 4+0.5*float64(i%4)
		b["current_a"], b["voltage_v"], b["travel_speed_mm_s"] = cur, v, s
		b["power_source_id"] = []string{"PS-1", "PS-2", "PS-3"}[i%3]
		b["welded_on"] = fmt.Sprintf("2026-11-%02d", 10+i/3)
		p := 0.025 * cur * math.Cbrt(cur/(s*v*v)) * (1 + 0.04*math.Sin(float64(i)))
		if i%3 == 2 && i >= 6 {
			p *= 1.2
		}
		id := e.create("/v1/coupons", "technician", b)["id"].(string)
		m := measurementBody("A")
		m["penetration_mm"] = p
		e.create("/v1/coupons/"+id+"/measurements", "technician", m)
	}
	q := "/v1/drift?process=GMAW&wire_diameter_mm=0.9&shielding_gas=Ar-25CO2&joint_type=fillet"
	got := decode[driftReply](t, "drift", e.do(http.MethodGet, q, "auditor", nil), http.StatusOK)
	seen := 0
	for _, c := range got.Charts {
		if c.Split != "power_source_id" {
			continue
		}
		seen++
		out := c.Signal != nil
		if out != (c.Value == "PS-3") {
			t.Errorf("%s: signal %v (advice %q); want only PS-3 out", c.Value, out, c.Advice)
		}
		if c.Value == "PS-3" && (c.Signal.Direction != "above" || !strings.Contains(c.Advice, "check the machine's calibration")) {
			t.Errorf("PS-3: %+v, advice %q", c.Signal, c.Advice)
		}
	}
	if seen != 3 {
		t.Errorf("%d power source charts, want 3", seen)
	}
	flags := e.do(http.MethodGet, "/v1/flags?kind=drift&variable=penetration_mm:power_source_id", "auditor", nil).items(t)
	if len(flags) != 1 || flags[0]["value_text"] != "PS-3" {
		t.Errorf("drift flags = %v, want one on PS-3", flags)
	}
	wantProblem(t, "no melting calibration", e.do(http.MethodGet, q+"&family=melting", "auditor", nil), http.StatusNotFound, "")
}

// TestCouponPlanRecord: a plan stores its proposals with reserved marks
// (logged, 201 with Location); a second plan with the same prefix is 409
// naming the first; a coupon recorded with a planned mark comes back in the
// plan, with the fit's standard errors now beside those the plan expected;
// the printable sheet lists the marks and the caution.
func TestCouponPlanRecord(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(8, 0)
	proc := e.rangedProcedure()
	prefix := uniq("PLAN")
	body := map[string]any{"procedure_id": proc, "joint_type": "fillet", "model": "jackson_free", "count": 2,
		"current_step_a": 5, "mark_prefix": prefix, "note": "two coupons to pin the exponents"}
	r := e.do(http.MethodPost, "/v1/coupon-plans", "engineer", body)
	plan := r.object(t)
	if r.status != http.StatusCreated || plan["marks"].([]any)[1] != prefix+"-02" {
		t.Fatalf("create plan: %d %s", r.status, r.body)
	}
	wantProblem(t, "same marks", e.do(http.MethodPost, "/v1/coupon-plans", "engineer", body), http.StatusConflict, "mark_prefix")
	first := plan["coupons"].([]any)[0].(map[string]any)
	b := couponBody(proc, "", prefix+"-01")
	b["current_a"], b["voltage_v"], b["travel_speed_mm_s"] = first["current_a"], first["voltage_v"], first["travel_speed_mm_s"]
	id := e.create("/v1/coupons", "technician", b)["id"].(string)
	m := measurementBody("A")
	m["penetration_mm"] = 3.1
	e.create("/v1/coupons/"+id+"/measurements", "technician", m)
	got := e.do(http.MethodGet, "/v1/coupon-plans/"+plan["id"].(string), "auditor", nil).object(t)
	back := got["coupons"].([]any)[0].(map[string]any)
	prog, _ := got["progress"].(map[string]any)
	if back["coupon_id"] != id || prog == nil || prog["welded"] != 1.0 || prog["coupons_now"] != 9.0 {
		t.Fatalf("plan after one coupon came back: coupons %v, progress %v", got["coupons"], got["progress"])
	}
	for _, c := range prog["coefficients"].([]any) {
		c := c.(map[string]any)
		if c["std_err_expected"] == nil || c["std_err_now"] == nil || c["std_err_before"] == nil {
			t.Errorf("progress of %v lacks a standard error", c)
		}
	}
	sheet := e.do(http.MethodGet, "/v1/coupon-plans/"+plan["id"].(string)+"/sheet", "auditor", nil)
	if sheet.status != http.StatusOK || !strings.Contains(string(sheet.body), prefix+"-02") || !strings.Contains(string(sheet.body), "CAUTION") {
		t.Errorf("sheet: %d %s", sheet.status, sheet.body)
	}
}
