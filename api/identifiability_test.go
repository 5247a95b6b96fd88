package api_test

import (
	"fmt"
	"math"
	"net/http"
	"strings"
	"testing"
)

// storeSynergic records 12 coupons of a group of their own (gas tag) whose
// penetration follows the published Jackson law with a small wobble. With
// synergic true the voltage follows the current (V = 14 + 0.05·I ± 0.1 V),
// as a synergic power source sets it; otherwise the same voltages are
// welded in an order unrelated to current.
func (e *testEnv) storeSynergic(gas string, synergic bool) {
	e.t.Helper()
	proc := e.mustProcedure()
	for i := range 12 {
		cur := 120 + 12*float64(i)
		j := i
		if !synergic {
			j = (5 * i) % 12
		}
		v := 14 + 0.05*(120+12*float64(j)) + 0.1*math.Sin(7*float64(j))
		s := 4 + 0.7*float64((3*i)%4)
		p := 0.025 * cur * math.Cbrt(cur/(s*v*v)) * (1 + 0.03*math.Sin(3*float64(i)))
		b := couponBody(proc, "", uniq("C-SYN"))
		b["current_a"], b["voltage_v"], b["travel_speed_mm_s"], b["shielding_gas"] = cur, v, s, gas
		b["welded_on"] = fmt.Sprintf("2026-10-%02d", 1+i)
		id := e.create("/v1/coupons", "technician", b)["id"].(string)
		if r := e.section(id, "A", p); r.status != http.StatusCreated {
			e.t.Fatalf("section: %d %s", r.status, r.body)
		}
	}
}

// TestSynergicFitRefused: through HTTP and PostgreSQL, a free-exponent fit
// of coupons whose voltage followed the current is refused (422) naming ln I
// and ln V and what to vary; the fixed-exponent fit of the same coupons is
// accepted; the same voltages welded independently of current fit, and the
// answer reports VIF and condition number (VIF limit 10: common practice,
// no source).
func TestSynergicFitRefused(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeSynergic("Ar-8CO2", true)
	e.storeSynergic("Ar-18CO2", false)
	body := func(model, gas string) map[string]any {
		b := calibrationBody(model, nil)
		b["shielding_gas"] = gas
		return b
	}
	r := e.do(http.MethodPost, "/v1/calibrations", "engineer", body("jackson_free", "Ar-8CO2"))
	p := wantProblem(t, "synergic free fit", r, http.StatusUnprocessableEntity, "coupons")
	for _, want := range []string{"ln I (current) and ln V (voltage) move together", "independently of current", "jackson_fixed"} {
		if !strings.Contains(p.Errors[0].Reason, want) {
			t.Errorf("refusal %q lacks %q", p.Errors[0].Reason, want)
		}
	}
	e.fit(body("jackson_fixed", "Ar-8CO2"))
	free := e.fit(body("jackson_free", "Ar-18CO2"))
	id := free.Fit.Penetration.Identifiability
	if id == nil || id.VIFLnVoltage > 10 || id.ConditionNumber <= 0 {
		t.Errorf("independent voltages: identifiability %+v, want VIFs ≤ 10 and a condition number", id)
	}
}
