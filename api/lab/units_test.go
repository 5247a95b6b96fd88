package lab_test

import (
	"testing"

	"etchlog/api/lab"
)

// TestFormatQuantity checks display values: the stored value in the chosen
// units, rounded to the resolution it was typed to, with the unit beside.
// Conversions: 1 in = 25.4 mm exactly, t/°F = 1.8·t/°C + 32 (NIST SP 811,
// appendix B.8 and section B.9); 1 lb = 0.45359237 kg exactly (B.8).
func TestFormatQuantity(t *testing.T) {
	t.Parallel()
	f := func(v float64) *float64 { return &v }
	for _, c := range []struct {
		name  string
		units lab.Units
		field string
		value any
		want  string
	}{
		{"whole amperes", lab.Metric, "current_a", 235.0, "235 A"},
		{"amperes have no other unit", lab.InchPound, "current_a", 235.0, "235 A"},
		{"volts to a tenth", lab.Metric, "voltage_v", 21.5, "21.5 V"},
		{"not recorded", lab.Metric, "preheat_c", (*float64)(nil), "not recorded"},
		{"typed in mm", lab.Metric, "thickness_mm", 6.35, "6.35 mm"},
		// 6.35 mm is 0.25 in exactly, the shorter form, so taken as typed in
		// inches; shown in mm it keeps its own two decimals.
		{"0.25 in shown in inches", lab.InchPound, "thickness_mm", f(6.35), "0.25 in"},
		// 6.4 mm to 0.1 mm: 0.0039 in a step, so three decimals (0.2520 in rounded).
		{"mm shown in inches", lab.InchPound, "thickness_mm", 6.4, "0.252 in"},
		{"whole °C shown in °F", lab.InchPound, "preheat_c", 100.0, "212 °F"},
		// 13 in/min = 13 × 25.4 / 60 mm/s = 5.50333… mm/s: typed in in/min to
		// whole numbers, so 1 in/min = 0.42 mm/s a step: one decimal in mm/s.
		{"in/min typed, shown in mm/s", lab.Metric, "travel_speed_mm_s", 13 * 25.4 / 60, "5.5 mm/s"},
		{"in/min typed, shown in in/min", lab.InchPound, "travel_speed_mm_s", 13 * 25.4 / 60, "13 in/min"},
		// 65 °F typed is 18.333… °C; a 1 °F step is 0.56 °C: one decimal.
		{"°F typed, shown in °C", lab.Metric, "preheat_c", (65 - 32) / 1.8, "18.3 °C"},
		{"°F typed, shown in °F", lab.InchPound, "preheat_c", (65 - 32) / 1.8, "65 °F"},
		// 7.6 m/min = 7.6 / 0.0254 in/min = 299.21… in/min; 0.1 m/min a step is 3.9 in/min: whole in/min.
		{"m/min shown in in/min", lab.InchPound, "wire_feed_speed_m_min", 7.6, "299 in/min"},
		{"kg/h shown in lb/h", lab.InchPound, "melting_rate_kg_h", 4.5, "9.9 lb/h"},
		{"heat input in kJ/in", lab.InchPound, "heat_input_j_mm", 1000.0, "25.4 kJ/in"},
	} {
		if got := lab.FormatQuantity(c.units, c.field, c.value); got != c.want {
			t.Errorf("%s: FormatQuantity(%s, %s, %v) = %q, want %q", c.name, c.units, c.field, c.value, got, c.want)
		}
	}
}

// TestFieldName checks the form field names the API accepts in each choice.
func TestFieldName(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		units       lab.Units
		field, want string
	}{
		{lab.InchPound, "travel_speed_mm_s", "travel_speed_in_min"},
		{lab.InchPound, "wire_feed_speed_m_min", "wire_feed_speed_in_min"},
		{lab.InchPound, "preheat_c", "preheat_f"},
		{lab.InchPound, "thickness_mm", "thickness_in"},
		{lab.InchPound, "current_a", "current_a"},
		{lab.Metric, "travel_speed_mm_s", "travel_speed_mm_s"},
		{lab.InchPound, "coupon_mark", "coupon_mark"},
	} {
		if got := lab.FieldName(c.units, c.field); got != c.want {
			t.Errorf("FieldName(%s, %s) = %s, want %s", c.units, c.field, got, c.want)
		}
	}
}
