package predict

import "testing"

// TestFieldUnit reads the unit back from field names; the symbols are those
// of NIST SP 811 (section 4 and Table 5 for °C; Appendix B for in, lb, °F).
func TestFieldUnit(t *testing.T) {
	for _, tc := range []struct {
		name, unit string
		ok         bool
	}{
		{"current_a", "A", true},
		{"voltage_v", "V", true},
		{"travel_speed_mm_s", "mm/s", true},
		{"travel_speed_in_min", "in/min", true},
		{"wire_feed_speed_m_min", "m/min", true},
		{"preheat_c", "°C", true},
		{"preheat_f", "°F", true},
		{"fused_area_in2", "in²", true},
		{"tensile_strength_mpa", "MPa", true},
		{"k_std_err_mm", "mm", true},               // unregistered: by its suffix
		{"alpha_std_err_kg_h_a", "kg/(h·A)", true}, // the longer suffix wins over _a
		{"residual_sd_lb_h", "lb/h", true},
		{"excess_pct", "%", true},
		{"level", "", false},       // a registered plain number
		{"pass_number", "", false}, // a registered count
		{"coupon_mark", "", false},
		{"a", "", false}, // a suffix alone is no quantity
	} {
		u, ok := FieldUnit(tc.name)
		if u != tc.unit || ok != tc.ok {
			t.Errorf("FieldUnit(%q) = %q, %v; want %q, %v", tc.name, u, ok, tc.unit, tc.ok)
		}
	}
}
