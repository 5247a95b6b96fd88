package predict

import (
	"encoding/json"
	"strings"
	"testing"
)

// TestLegacyCalibrationWords decodes fits and samples stored with the earlier
// words (model jackson_fixed_exponents, "per" unit suffixes) and checks that
// they read exactly as the same values stored with the current words, and
// that encoding writes only the current words.
func TestLegacyCalibrationWords(t *testing.T) {
	for _, c := range []struct {
		name, old, cur string
		into           func() any
	}{
		{"PenetrationFit", `{"model":"jackson_fixed_exponents","k_mm":0.0251}`, `{"model":"jackson_fixed","k_mm":0.0251}`,
			func() any { return new(PenetrationFit) }},
		{"FreeFit", `{"model":"jackson_free_exponents","coef":[1,2,3,4]}`, `{"model":"jackson_free","coef":[1,2,3,4]}`,
			func() any { return new(PenetrationFit) }},
		{"PenetrationSample", `{"id":"a","current_a":180,"voltage_v":21,"travel_speed_mm_per_s":5,"penetration_mm":1.8}`,
			`{"id":"a","current_a":180,"voltage_v":21,"travel_speed_mm_s":5,"penetration_mm":1.8}`,
			func() any { return new(PenetrationSample) }},
		{"MeltingSample", `{"id":"a","current_a":180,"extension_mm":12,"melting_rate_kg_per_h":2.5}`,
			`{"id":"a","current_a":180,"extension_mm":12,"melting_rate_kg_h":2.5}`,
			func() any { return new(MeltingSample) }},
		{"MeltingFit", `{"model":"lesnewich","alpha_kg_per_h_a":0.0095,"beta_kg_per_h_a2_mm":4.5e-6,"alpha_std_err_kg_per_h_a":1e-4,` +
			`"beta_std_err_kg_per_h_a2_mm":2e-7,"alpha_lb_per_h_a":0.02,"beta_lb_per_h_a2_in":2.5e-4,"alpha_std_err_lb_per_h_a":3e-4,` +
			`"beta_std_err_lb_per_h_a2_in":1e-5,"residual_sd_kg_per_h":0.05,"n":8,"dof":6}`,
			`{"model":"lesnewich","alpha_kg_h_a":0.0095,"beta_kg_h_a2_mm":4.5e-6,"alpha_std_err_kg_h_a":1e-4,` +
				`"beta_std_err_kg_h_a2_mm":2e-7,"alpha_lb_h_a":0.02,"beta_lb_h_a2_in":2.5e-4,"alpha_std_err_lb_h_a":3e-4,` +
				`"beta_std_err_lb_h_a2_in":1e-5,"residual_sd_kg_h":0.05,"n":8,"dof":6}`,
			func() any { return new(MeltingFit) }},
	} {
		t.Run(c.name, func(t *testing.T) {
			old, cur := c.into(), c.into()
			if err := json.Unmarshal([]byte(c.old), old); err != nil {
				t.Fatalf("decode earlier words: %v", err)
			}
			if err := json.Unmarshal([]byte(c.cur), cur); err != nil {
				t.Fatalf("decode current words: %v", err)
			}
			a, _ := json.Marshal(old)
			b, _ := json.Marshal(cur)
			if string(a) != string(b) {
				t.Errorf("earlier words read as %s, current as %s; want the same", a, b)
			}
			for _, word := range []string{"_exponents", "_per_"} {
				if strings.Contains(string(a), word) {
					t.Errorf("encoded %s holds an earlier word (%s)", a, word)
				}
			}
		})
	}
}
