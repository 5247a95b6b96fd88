package api

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"

	"etchlog/db/logfmt"
)

// TestRewriteAnswer checks the JSON boundary: numbers rounded to 12
// significant digits, integers and text untouched, member order kept.
// Conversions are worked from exact definitions (NIST SP 811, Appendix B:
// 1 in = 25.4 mm, 1 lb = 0.45359237 kg, t/°F = 1.8·t/°C + 32).
func TestRewriteAnswer(t *testing.T) {
	for _, tc := range []struct {
		name, in string
		inch     bool
		want     string
	}{
		// 0.375 in × 25.4 in binary floating point; 175 A × 1.1 for a range maximum.
		{"Noise", `{"thickness_mm":9.524999999999999,"max":192.50000000000003,"excess":0.06499999999999773}`, false,
			`{"thickness_mm":9.525,"max":192.5,"excess":0.065}`},
		{"TwelveDigits", `[1.8146316996320382,-3.671577269912021,9.464514612305495e-07,1e-300]`, false,
			`[1.81463169963,-3.67157726991,9.46451461231e-7,1e-300]`},
		{"IntegersAndTextAsSent", `{"z":12345678901234567890,"a":"0.30000000000000004","id":"01a2","n":null,"ok":true}`, false,
			`{"z":12345678901234567890,"a":"0.30000000000000004","id":"01a2","n":null,"ok":true}`},
		{"HTMLEscapedAsEncodingJSON", `{"caution":"a \u003c b \u0026 c"}`, false, `{"caution":"a \u003c b \u0026 c"}`},
		// 9.525 mm = 0.375 in; 5.08 mm/s = 12 in/min; 7.62 m/min = 300 in/min; 20 °C = 68 °F;
		// 32.258 mm² = 0.05 in²; 0.45359237 kg/h = 1 lb/h; 1 kJ/mm = 25.4 kJ/in; 1000 J/mm = 25.4 kJ/in.
		{"InchPound", `{"thickness_mm":9.525,"travel_speed_mm_s":5.08,"wire_feed_speed_m_min":7.62,"preheat_c":20,` +
			`"fused_area_mm2":32.258,"deposition_rate_kg_h":0.45359237,"heat_input_kj_mm":1,"arc_energy_j_mm":1000,"current_a":180}`, true,
			`{"thickness_in":0.375,"travel_speed_in_min":12,"wire_feed_speed_in_min":300,"preheat_f":68,` +
				`"fused_area_in2":0.05,"deposition_rate_lb_h":1,"heat_input_kj_in":25.4,"arc_energy_kj_in":25.4,"current_a":180}`},
		{"InchPoundTwinKept", `{"penetration_mm":2.54,"penetration_in":0.1,"arc_energy_kj_mm":1,"arc_energy_kj_in":25.4}`, true,
			`{"penetration_in":0.1,"arc_energy_kj_in":25.4}`},
		{"InchPoundNestedAndNull", `{"items":[{"ctwd_mm":null,"group":{"wire_diameter_mm":0.889}}],"next_cursor":""}`, true,
			`{"items":[{"ctwd_in":null,"group":{"wire_diameter_in":0.035}}],"next_cursor":""}`},
		{"InchPoundInterval", `{"wire_feed_speed_m_min":{"min":2.54,"max":7.62,"min_limit":"x"}}`, true,
			`{"wire_feed_speed_in_min":{"min":100,"max":300,"min_limit":"x"}}`},
		{"InchPoundCoefficientsKept", `{"alpha_kg_h_a":0.5,"beta_kg_h_a2_mm":2e-6,"k_mm":0.025,"k_std_err_mm":0.001}`, true,
			`{"alpha_kg_h_a":0.5,"beta_kg_h_a2_mm":0.000002,"k_mm":0.025,"k_std_err_mm":0.001}`},
		// A flag in °C: value and edges by t_F = 1.8·t_C + 32, the excess (a difference) by 1.8 alone.
		{"InchPoundFlagCelsius", `{"variable":"preheat_c","unit":"°C","value":5,"min":10,"max":null,"excess":5,"excess_pct":50}`, true,
			`{"variable":"preheat_f","unit":"°F","value":41,"min":50,"max":null,"excess":9,"excess_pct":50}`},
		// A qualified range in mm/s: 3.81–6.35 mm/s = 9–15 in/min.
		{"InchPoundRange", `{"variable":"travel_speed_mm_s","unit":"mm/s","bands":[{"max":6.349999999999999,"min":3.8099999999999996}]}`, true,
			`{"variable":"travel_speed_in_min","unit":"in/min","bands":[{"max":15,"min":9}]}`},
		{"InchPoundOtherUnitsKept", `{"variable":"current_a","unit":"A","value":150,"min":160}`, true,
			`{"variable":"current_a","unit":"A","value":150,"min":160}`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := rewriteAnswer([]byte(tc.in), tc.inch)
			if err != nil {
				t.Fatal(err)
			}
			if string(got) != tc.want {
				t.Errorf("rewriteAnswer(%s, inch=%v)\n got %s\nwant %s", tc.in, tc.inch, got, tc.want)
			}
		})
	}
}

// TestRoundNumbersMatchesTree checks the one-pass metric rewrite against
// the tree rewrite on random documents written by encoding/json: strings
// full of digits, quotes, escapes and minus signs, keys that look like
// numbers, integers, floats of every magnitude, nesting.
func TestRoundNumbersMatchesTree(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 34))
	// (Invalid UTF-8 is left out: encoding/json writes it as \ufffd, which
	// the one-pass rewrite keeps and the tree writes as the character
	// itself, the same string in two spellings.)
	pieces := []string{"1", "-2", "3.5e-7", `"`, `\`, "\n", "<", "é", "\u2028", " ", "e", "E+", "{", "]", ","}
	str := func() string {
		var s string
		for range rng.IntN(8) {
			s += pieces[rng.IntN(len(pieces))]
		}
		return s
	}
	var gen func(depth int) any
	gen = func(depth int) any {
		switch k := rng.IntN(8); {
		case depth > 3 || k < 2:
			return str()
		case k == 2:
			return rng.Int64N(1<<62) - 1<<61
		case k == 3:
			return (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(40)-20))
		case k == 4:
			return []any{gen(depth + 1), gen(depth + 1), nil, true}
		default:
			m := map[string]any{}
			for range rng.IntN(5) {
				m[str()] = gen(depth + 1)
			}
			return m
		}
	}
	for range 2000 {
		doc, err := json.Marshal(gen(0))
		if err != nil {
			t.Fatal(err)
		}
		want, err := rewriteTree(doc, false)
		if err != nil {
			t.Fatal(err)
		}
		if got := roundNumbers(doc); string(got) != string(want) {
			t.Fatalf("roundNumbers(%s)\n got %s\nwant %s", doc, got, want)
		}
	}
}

// TestAppendFloatMatchesEncodingJSON checks the number writer against
// encoding/json's own float64 encoding on random values of every
// magnitude, both signs and the exponent limits (1e-6, 1e21).
func TestAppendFloatMatchesEncodingJSON(t *testing.T) {
	rng := rand.New(rand.NewPCG(56, 78))
	values := []float64{0, math.Copysign(0, -1), 1e-6, 1e-7, 9.999999e-7, 1e21, 1e20, 123456789012345678901, 5e-324, math.MaxFloat64, 0.1, -2.5}
	for range 20000 {
		v := (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(60)-30))
		values = append(values, v, roundAnswer(v))
	}
	for _, v := range values {
		want, err := json.Marshal(v)
		if err != nil {
			t.Fatal(err)
		}
		if got := logfmt.AppendJSONFloat(nil, v); string(got) != string(want) {
			t.Fatalf("AppendJSONFloat(%v) = %s, encoding/json writes %s", v, got, want)
		}
	}
}

// TestShortLiteralsNeedNoRounding checks the short cut of writeNumber: a
// literal of at most answerDigits significant digits, in every form a JSON
// document may carry it (encoding/json's, fixed, exponent, trailing zeros),
// at every magnitude from subnormal to the largest, is written as the full
// rounding (roundAnswer, then encoding/json's format) writes it.
func TestShortLiteralsNeedNoRounding(t *testing.T) {
	rng := rand.New(rand.NewPCG(91, 17))
	lits := []string{"0.0", "-0.0", "1e-323", "5e-324", "2.2250738585e-308", "1.79769313486e308", "9.99999999999e20", "1e21", "0.000001", "100.000000000"}
	for range 50000 {
		v := (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(640)-320))
		digits := 1 + rng.IntN(answerDigits)
		lits = append(lits,
			strconv.FormatFloat(v, 'e', digits-1, 64),
			strconv.FormatFloat(v, 'g', digits, 64),
			string(logfmt.AppendJSONFloat(nil, roundTo(v, digits))),
			strconv.FormatFloat(roundTo(v, digits), 'f', -1, 64)+".0")
	}
	for _, lit := range lits {
		if !strings.ContainsAny(lit, ".eE") || significantDigits(lit) > answerDigits {
			continue
		}
		f, err := strconv.ParseFloat(lit, 64)
		if err != nil {
			continue // out of range: written as it came either way
		}
		want := logfmt.AppendJSONFloat(nil, roundAnswer(f))
		var got bytes.Buffer
		writeNumber(&got, lit, 0, false)
		if got.String() != string(want) {
			t.Fatalf("writeNumber(%s) = %s, the full rounding writes %s", lit, got.String(), want)
		}
	}
}
