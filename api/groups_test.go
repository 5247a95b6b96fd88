package api_test

import (
	"fmt"
	"net/http"
	"strings"
	"testing"
)

// TestGroupsMatchAsTheTradeDoes: coupons recorded as 0.9 mm wire and
// "Ar-25CO2" are found by a fit asking for 0.035 in wire (0.889 mm, the
// same nominal size; table: common practice, no source) and "75Ar/25CO2" or
// "ar-25co2" (the same composition); the calibration stores the canonical
// group. A fit asking for a group without coupons is refused with the groups
// that exist, closest first.
func TestGroupsMatchAsTheTradeDoes(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(6, 0)
	butt := couponBody(e.mustProcedure(), "", uniq("C-BUTT"))
	butt["joint_type"] = "butt"
	e.create("/v1/coupons", "technician", butt)
	// A coupon that records no gas welded with its procedure's (Ar-25CO2):
	// it belongs to the group, and its model view says the gas is inherited.
	gasless := couponBody(e.mustProcedure(), "", uniq("C-NOGAS"))
	delete(gasless, "shielding_gas")
	ng := e.create("/v1/coupons", "technician", gasless)["id"].(string)
	if r := e.section(ng, "A", 1.9); r.status != http.StatusCreated {
		t.Fatalf("section: %d %s", r.status, r.body)
	}
	view := e.do(http.MethodGet, "/v1/coupons/"+ng+"/model", "auditor", nil).object(t)
	group, _ := view["group"].(map[string]any)
	class, _ := view["shielding_gas_class"].(map[string]any)
	if group["shielding_gas"] != "Ar-25CO2" || !strings.Contains(fmt.Sprint(view["inherited"]), "shielding_gas") || class["iso14175"] != "M21" {
		t.Errorf("model view of a gasless coupon: group %v, inherited %v, class %v; want Ar-25CO2 inherited, M21 (ISO 14175, from memory)",
			group, view["inherited"], class)
	}
	for _, gas := range []string{"75Ar/25CO2", "ar-25co2"} {
		b := calibrationBody("jackson_fixed", nil)
		delete(b, "wire_diameter_mm")
		b["wire_diameter_in"], b["shielding_gas"] = 0.035, gas
		cal := e.fit(b)
		if len(cal.CouponIDs) != 7 {
			t.Errorf("fit with 0.035 in and %q: %d coupons, want the 6 of 0.9 mm Ar-25CO2 and the gasless one", gas, len(cal.CouponIDs))
		}
		got := e.do(http.MethodGet, "/v1/calibrations/"+cal.ID, "auditor", nil).object(t)
		if got["shielding_gas"] != "Ar-25CO2" || got["wire_diameter_mm"] != 0.9 {
			t.Errorf("stored group gas %v, wire %v; want Ar-25CO2 and 0.9", got["shielding_gas"], got["wire_diameter_mm"])
		}
	}
	b := calibrationBody("jackson_fixed", nil)
	b["shielding_gas"] = "Ar-10CO2"
	r := e.do(http.MethodPost, "/v1/calibrations", "engineer", b)
	p := wantProblem(t, "fit of a group without coupons", r, http.StatusUnprocessableEntity, "coupons")
	if len(p.Groups) != 2 || p.Groups[0].ShieldingGas != "Ar-25CO2" || p.Groups[0].JointType != "fillet" ||
		p.Groups[0].Coupons != 7 || p.Groups[1].JointType != "butt" {
		t.Errorf("groups = %+v, want the fillet Ar-25CO2 group (7 coupons) first, then the butt group", p.Groups)
	}
	if !strings.Contains(p.Errors[0].Reason, "closest first") {
		t.Errorf("reason %q does not list the groups", p.Errors[0].Reason)
	}
}
