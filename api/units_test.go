package api_test

import (
	"net/http"
	"testing"
)

// spellingCase is one quantity sent in another unit than the stored one.
type spellingCase struct {
	kind, field string  // input kind and the field sent
	value       float64 // value sent
	stored      string  // stored (metric) field
	want        float64 // stored value by the definition of the units
}

// spellingCases cover every alternative spelling of every input schema. The
// wanted values are worked by hand from exact definitions in NIST SP 811
// (2008), Appendix B: 1 in = 25.4 mm, 1 in² = 645.16 mm², 1 min = 60 s,
// t/°C = (t/°F − 32)/1.8.
var spellingCases = []spellingCase{
	{"Procedure", "wire_diameter_in", 0.035, "wire_diameter_mm", 0.889},    // 0.035 × 25.4
	{"Procedure", "thickness_min_in", 0.125, "thickness_min_mm", 3.175},    // 0.125 × 25.4
	{"Procedure", "thickness_max_in", 0.75, "thickness_max_mm", 19.05},     // 0.75 × 25.4
	{"Procedure", "min_penetration_in", 0.04, "min_penetration_mm", 1.016}, // 0.04 × 25.4

	{"QualificationRecord", "wire_diameter_in", 0.045, "wire_diameter_mm", 1.143},          // 0.045 × 25.4
	{"QualificationRecord", "thickness_in", 0.5, "thickness_mm", 12.7},                     // 0.5 × 25.4
	{"QualificationRecord", "travel_speed_in_min", 15, "travel_speed_mm_s", 6.35},          // 15 × 25.4 / 60
	{"QualificationRecord", "travel_speed_mm_min", 360, "travel_speed_mm_s", 6},            // 360 / 60
	{"QualificationRecord", "wire_feed_speed_in_min", 400, "wire_feed_speed_m_min", 10.16}, // 400 × 25.4 / 1000
	{"QualificationRecord", "ctwd_in", 0.75, "ctwd_mm", 19.05},                             // 0.75 × 25.4
	{"QualificationRecord", "preheat_f", 50, "preheat_c", 10},                              // (50 − 32) / 1.8
	{"QualificationRecord", "interpass_f", 302, "interpass_c", 150},                        // (302 − 32) / 1.8
	{"QualificationRecord", "min_penetration_in", 0.04, "min_penetration_mm", 1.016},       // 0.04 × 25.4

	{"Coupon", "thickness_in", 0.375, "thickness_mm", 9.525},                 // 0.375 × 25.4
	{"Coupon", "travel_speed_in_min", 12, "travel_speed_mm_s", 5.08},         // 12 × 25.4 / 60
	{"Coupon", "travel_speed_mm_min", 300, "travel_speed_mm_s", 5},           // 300 / 60
	{"Coupon", "wire_feed_speed_in_min", 300, "wire_feed_speed_m_min", 7.62}, // 300 × 25.4 / 1000
	{"Coupon", "ctwd_in", 0.625, "ctwd_mm", 15.875},                          // 0.625 × 25.4
	{"Coupon", "wire_diameter_in", 0.035, "wire_diameter_mm", 0.889},         // 0.035 × 25.4
	{"Coupon", "preheat_f", 65, "preheat_c", 55.0 / 3},                       // (65 − 32) / 1.8 = 18⅓
	{"Coupon", "interpass_f", -4, "interpass_c", -20},                        // (−4 − 32) / 1.8: the lower bound

	{"Measurement", "penetration_in", 0.0625, "penetration_mm", 1.5875},  // 1/16 × 25.4
	{"Measurement", "bead_width_in", 0.3, "bead_width_mm", 7.62},         // 0.3 × 25.4
	{"Measurement", "reinforcement_in", -0.1, "reinforcement_mm", -2.54}, // underfill, −0.1 × 25.4
	{"Measurement", "leg1_in", 0.25, "leg1_mm", 6.35},                    // 0.25 × 25.4
	{"Measurement", "leg2_in", 0.3125, "leg2_mm", 7.9375},                // 5/16 × 25.4
	{"Measurement", "throat_in", 0.177, "throat_mm", 4.4958},             // 0.177 × 25.4
	{"Measurement", "fused_area_in2", 0.05, "fused_area_mm2", 32.258},    // 0.05 × 645.16
}

// TestUnitsIn sends each quantity in its inch-pound (or mm/min) spelling and
// checks the stored, returned and read-back value is the metric one.
func TestUnitsIn(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	kinds := map[string]inputKind{}
	for _, k := range inputKinds() {
		kinds[k.name] = k
	}
	for _, c := range spellingCases {
		t.Run(c.kind+"/"+c.field, func(t *testing.T) {
			k := kinds[c.kind]
			b := k.body(e)
			delete(b, c.stored)
			b[c.field] = c.value
			got := e.create(k.path(e), k.role, b)
			if _, ok := got[c.field]; ok {
				t.Errorf("answer has %s; answers are metric only", c.field)
			}
			v, _ := got[c.stored].(float64)
			// The definitions are exact and answers carry 12 significant
			// digits: 0.375 in reads 9.525 mm exactly, not 9.524999999999999.
			if v != answered(c.want) {
				t.Errorf("%s = %v sent as %s: %s = %.17g, want %.17g", c.field, c.value, c.field, c.stored, v, answered(c.want))
			}
			read := e.do(http.MethodGet, k.read+"/"+got["id"].(string), "auditor", nil).object(t)
			if read[c.stored] != got[c.stored] {
				t.Errorf("read back %s = %v, want %v as created", c.stored, read[c.stored], got[c.stored])
			}
		})
	}
}

// TestUnitsTwice gives one quantity in two spellings: a 400 that names the
// second spelling and the first one in its reason.
func TestUnitsTwice(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	kinds := map[string]inputKind{}
	for _, k := range inputKinds() {
		kinds[k.name] = k
	}
	for _, c := range spellingCases {
		t.Run(c.kind+"/"+c.field, func(t *testing.T) {
			k := kinds[c.kind]
			b := k.body(e)
			if _, ok := b[c.stored]; !ok {
				b[c.stored] = c.want
			}
			b[c.field] = c.value
			r := e.do(http.MethodPost, k.path(e), k.role, b)
			p := wantProblem(t, "both "+c.stored+" and "+c.field, r, http.StatusBadRequest, c.field)
			if len(p.Errors) > 0 && !contains(p.Errors[0].Reason, c.stored) {
				t.Errorf("reason %q does not name the other spelling %s", p.Errors[0].Reason, c.stored)
			}
		})
	}
	t.Run("Coupon/travel_speed_mm_min+travel_speed_in_min", func(t *testing.T) {
		b := kinds["Coupon"].body(e)
		delete(b, "travel_speed_mm_s")
		b["travel_speed_mm_min"], b["travel_speed_in_min"] = 300, 12
		r := e.do(http.MethodPost, "/v1/coupons", "technician", b)
		wantProblem(t, "two travel speed spellings", r, http.StatusBadRequest, "travel_speed_in_min")
	})
}
