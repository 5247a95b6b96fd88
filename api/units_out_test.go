package api_test

import (
	"math"
	"net/http"
	"strings"
	"testing"
)

// Inch-pound answers, checked against exact definitions (NIST SP 811 (2008),
// Appendix B): 1 in = 25.4 mm, 1 in² = 645.16 mm², 1 min = 60 s,
// 1 lb = 0.45359237 kg, t/°F = 1.8·t/°C + 32.
var inchPound = []struct {
	metric, inch string
	conv         func(float64) float64
}{
	{"_kj_mm", "_kj_in", func(v float64) float64 { return v * 25.4 }},
	{"_j_mm", "_kj_in", func(v float64) float64 { return v * 25.4 / 1000 }},
	{"_mm_s", "_in_min", func(v float64) float64 { return v * 60 / 25.4 }},
	{"_m_min", "_in_min", func(v float64) float64 { return v * 1000 / 25.4 }},
	{"_kg_h", "_lb_h", func(v float64) float64 { return v / 0.45359237 }},
	{"_mm2", "_in2", func(v float64) float64 { return v / 645.16 }},
	{"_mm", "_in", func(v float64) float64 { return v / 25.4 }},
	{"_c", "_f", func(v float64) float64 { return v*1.8 + 32 }},
}

// inchTwin returns a metric field's inch-pound name and conversion.
func inchTwin(key string) (string, func(float64) float64, bool) {
	if strings.HasPrefix(key, "alpha_") || strings.HasPrefix(key, "beta_") || strings.HasPrefix(key, "k_") {
		return "", nil, false
	}
	for _, s := range inchPound {
		if strings.HasSuffix(key, s.metric) {
			return strings.TrimSuffix(key, s.metric) + s.inch, s.conv, true
		}
	}
	return "", nil, false
}

// TestUnitsOutRecords sends each quantity in its inch-pound spelling and
// reads the record back with units=inch-pound: the same number under the
// same name, exactly (0.375 in reads 0.375 in), and no metric spelling.
func TestUnitsOutRecords(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	kinds := map[string]inputKind{}
	for _, k := range inputKinds() {
		kinds[k.name] = k
	}
	for _, c := range spellingCases {
		if strings.HasSuffix(c.field, "_mm_min") {
			continue // a metric spelling: it answers as travel_speed_mm_s or, in inch-pound, travel_speed_in_min
		}
		t.Run(c.kind+"/"+c.field, func(t *testing.T) {
			k := kinds[c.kind]
			b := k.body(e)
			delete(b, c.stored)
			b[c.field] = c.value
			id := e.create(k.path(e), k.role, b)["id"].(string)
			for _, path := range []string{k.read + "/" + id + "?units=inch-pound", k.read + "/" + id + "/revisions?units=inch-pound"} {
				r := e.do(http.MethodGet, path, "auditor", nil)
				got := r.object(t)
				if items, ok := got["items"].([]any); ok {
					got = items[0].(map[string]any)
				}
				if v, ok := got[c.field].(float64); !ok || v != c.value {
					t.Errorf("GET %s: %s = %v, want %v exactly as sent", path, c.field, got[c.field], c.value)
				}
				if _, ok := got[c.stored]; ok {
					t.Errorf("GET %s: has %s besides %s", path, c.stored, c.field)
				}
			}
			if v := e.do(http.MethodGet, k.read+"/"+id+"?units=metric", "auditor", nil).object(t)[c.stored]; v != answered(c.want) {
				t.Errorf("GET ?units=metric: %s = %v, want %v", c.stored, v, answered(c.want))
			}
		})
	}
	t.Run("ErrUnknownUnits", func(t *testing.T) {
		r := e.do(http.MethodGet, "/v1/coupons?units=imperial", "auditor", nil)
		wantProblem(t, "units=imperial", r, http.StatusUnprocessableEntity, "units")
	})
}

// TestUnitsOutModels asks each model endpoint the same question twice, in
// metric and with units=inch-pound, and checks every metric quantity comes
// back under its inch-pound name, converted by the exact definitions. Both
// answers carry 12 significant digits, so they agree to about 1e-11.
func TestUnitsOutModels(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(8, 0)
	e.activate(e.fit(calibrationBody("jackson_fixed", nil)).ID)
	coupon := e.storeFitCoupons(1, 0)[0].id
	les := map[string]any{"alpha_kg_h_a": 0.0095, "beta_kg_h_a2_mm": 4.5e-6}
	predictBody := fitGroupBody()
	for k, v := range map[string]any{"current_a": 180.0, "voltage_v": 21.0, "travel_speed_in_min": 12.0, "wire_feed_speed_m_min": 7.6,
		"ctwd_mm": 15.0, "arc_length_mm": 3.0, "deposition_efficiency": 0.95, "lesnewich": les} {
		predictBody[k] = v
	}
	holdBody := fitGroupBody()
	for k, v := range map[string]any{"current_a": 180.0, "voltage_v": 21.0, "new_voltage_v": 22.5, "travel_speed_in_min": 12.0, "new_travel_speed_in_min": 15.0} {
		holdBody[k] = v
	}
	penBody := fitGroupBody()
	for k, v := range map[string]any{"solve_for": "current", "penetration_mm": 2.0, "voltage_v": 20.0, "travel_speed_mm_s": 5.0} {
		penBody[k] = v
	}
	for _, c := range []struct {
		method, path string
		body         map[string]any
	}{
		{http.MethodPost, "/v1/predictions", predictBody},
		{http.MethodPost, "/v1/inverse/hold-penetration", holdBody},
		{http.MethodPost, "/v1/inverse/penetration", penBody},
		{http.MethodPost, "/v1/inverse/current-for-deposition", map[string]any{"deposition_rate_kg_h": 3.2, "deposition_efficiency": 0.95,
			"ctwd_in": 0.75, "arc_length_mm": 3, "lesnewich": les}},
		{http.MethodPost, "/v1/parameter-window", groupWindowBody()},
		{http.MethodGet, "/v1/coupons/" + coupon + "/model", nil},
	} {
		t.Run(strings.TrimPrefix(c.path, "/v1/"), func(t *testing.T) {
			metric := e.do(c.method, c.path, "auditor", c.body)
			inch := e.do(c.method, c.path+"?units=inch-pound", "auditor", c.body)
			if metric.status != http.StatusOK || inch.status != http.StatusOK {
				t.Fatalf("%s = %d and %d, want 200: %s", c.path, metric.status, inch.status, inch.body)
			}
			if n := sameInInchPound(t, "", metric.object(t), inch.object(t)); n == 0 {
				t.Errorf("%s: no quantity was converted", c.path)
			}
		})
	}
}

// sameInInchPound compares a metric answer with its inch-pound twin and
// returns how many quantities it converted.
func sameInInchPound(t *testing.T, where string, metric, inch any) int {
	t.Helper()
	switch m := metric.(type) {
	case map[string]any:
		in, ok := inch.(map[string]any)
		if !ok {
			t.Errorf("%s: inch-pound answer is %T, want an object", where, inch)
			return 0
		}
		n := 0
		for k, v := range m {
			name, conv, ok := inchTwin(k)
			if !ok {
				n += sameInInchPound(t, where+"."+k, v, in[k])
				continue
			}
			if _, ok := in[k]; ok {
				t.Errorf("%s.%s: still metric in the inch-pound answer", where, k)
			}
			n++
			if _, native := m[name]; native {
				continue // the metric answer has the inch-pound figure too; it is compared under its own name
			}
			mv, isNum := v.(float64)
			iv, _ := in[name].(float64)
			switch {
			case v == nil:
				if in[name] != nil {
					t.Errorf("%s.%s = %v, want null as %s is", where, name, in[name], k)
				}
			case isNum:
				if want := conv(mv); math.Abs(iv-want) > 1e-11*math.Abs(want) {
					t.Errorf("%s.%s = %v, want %v (%s = %v)", where, name, iv, want, k, mv)
				}
			default: // an interval: its min and max
				n += sameInterval(t, where+"."+name, v, in[name], conv)
			}
		}
		return n
	case []any:
		in, _ := inch.([]any)
		if len(in) != len(m) {
			t.Errorf("%s: %d items in inch-pound, want %d", where, len(in), len(m))
			return 0
		}
		n := 0
		for i := range m {
			n += sameInInchPound(t, where+"[]", m[i], in[i])
		}
		return n
	}
	if metric != inch {
		t.Errorf("%s = %v in inch-pound, want %v as in metric", where, inch, metric)
	}
	return 0
}

// sameInterval compares the min and max of an interval object.
func sameInterval(t *testing.T, where string, metric, inch any, conv func(float64) float64) int {
	t.Helper()
	m, _ := metric.(map[string]any)
	in, _ := inch.(map[string]any)
	for _, k := range []string{"min", "max"} {
		mv, _ := m[k].(float64)
		iv, _ := in[k].(float64)
		if want := conv(mv); math.Abs(iv-want) > 1e-11*math.Abs(want) {
			t.Errorf("%s.%s = %v, want %v", where, k, iv, want)
		}
	}
	return 1
}
