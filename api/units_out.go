package api

import (
	"encoding/json"
	"strings"

	"etchlog/predict"
)

// Answers are metric by default. An operation that declares the units
// parameter answers units=inch-pound with each quantity under the
// inch-pound spelling requests accept (thickness_in, travel_speed_in_min,
// wire_feed_speed_in_min, preheat_f, deposition_rate_lb_h, heat_input_kj_in...),
// converted from the stored value by the exact definitions in predict.
const (
	unitsMetric    = "metric"
	unitsInchPound = "inch-pound"
)

// outSpelling turns one metric field-name suffix into its inch-pound one.
// conv converts a value; diff converts a difference of two values (°C → °F
// has an offset that a difference does not).
type outSpelling struct {
	metric, inch string
	conv, diff   func(float64) float64
}

func mm2ToIn2(v float64) float64 { return v / (predict.MMPerInch * predict.MMPerInch) }
func jPerMMToKJPerIn(v float64) float64 {
	return predict.KJPerMMToKJPerIn(predict.JPerMMToKJPerMM(v))
}
func celsiusDiffToF(v float64) float64 { return v * 9 / 5 }

// outSpellings are tried in order: the longer suffix first (_kj_mm before _mm).
var outSpellings = []outSpelling{
	{"_kj_mm", "_kj_in", predict.KJPerMMToKJPerIn, nil},
	{"_j_mm", "_kj_in", jPerMMToKJPerIn, nil},
	{"_mm_s", "_in_min", predict.MMPerSToInPerMin, nil},
	{"_m_min", "_in_min", predict.MPerMinToInPerMin, nil},
	{"_kg_h", "_lb_h", predict.KgPerHToLbPerH, nil},
	{"_mm2", "_in2", mm2ToIn2, nil},
	{"_mm", "_in", predict.MMToInch, nil},
	{"_c", "_f", predict.CelsiusToFahrenheit, celsiusDiffToF},
}

// outUnits are the unit names of unit-labelled objects (a flag, a qualified
// range's variable) and the spelling of their variable names.
var outUnits = map[string]struct {
	inch string
	sp   outSpelling
}{
	"mm":    {"in", outSpellings[6]},
	"mm²":   {"in²", outSpellings[5]},
	"mm/s":  {"in/min", outSpellings[2]},
	"m/min": {"in/min", outSpellings[3]},
	"kg/h":  {"lb/h", outSpellings[4]},
	"J/mm":  {"kJ/in", outSpellings[1]},
	"kJ/mm": {"kJ/in", outSpellings[0]},
	"°C":    {"°F", outSpellings[7]},
}

// spellingOf finds the metric suffix of a field name. Model coefficients
// (alpha_…, beta_…, Jackson's k_…) keep their own units: their inch-pound
// forms are not a change of one length or rate.
func spellingOf(key string) (outSpelling, bool) {
	if strings.HasPrefix(key, "alpha_") || strings.HasPrefix(key, "beta_") || strings.HasPrefix(key, "k_") {
		return outSpelling{}, false
	}
	for _, s := range outSpellings {
		if strings.HasSuffix(key, s.metric) && len(key) > len(s.metric) {
			return s, true
		}
	}
	return outSpelling{}, false
}

// inchName is a field name in its inch-pound spelling.
func (s outSpelling) inchName(key string) string { return strings.TrimSuffix(key, s.metric) + s.inch }

// toInchPound rewrites an answer's quantities into inch-pound spellings.
// A metric field whose inch-pound twin is already in the same object is
// dropped, so each quantity appears once.
func toInchPound(v any) any {
	switch t := v.(type) {
	case []any:
		for i := range t {
			t[i] = toInchPound(t[i])
		}
		return t
	case object:
		if u, ok := t.get("unit"); ok {
			if name, ok := u.(string); ok {
				if to, ok := outUnits[name]; ok {
					t = unitLabelled(t, to.inch, to.sp)
				}
			}
		}
		out := make(object, 0, len(t))
		for _, m := range t {
			val := toInchPound(m.val)
			if s, ok := spellingOf(m.key); ok {
				name := s.inchName(m.key)
				if _, twin := t.get(name); twin {
					continue
				}
				out = append(out, member{name, convertValue(val, s.conv)})
				continue
			}
			out = append(out, member{m.key, val})
		}
		return out
	}
	return v
}

// convertValue converts a number, each number of an array, or the min and
// max of an interval object; other values pass unchanged.
func convertValue(v any, conv func(float64) float64) any {
	switch t := v.(type) {
	case json.Number:
		if f, err := t.Float64(); err == nil {
			return conv(f)
		}
	case []any:
		for i := range t {
			t[i] = convertValue(t[i], conv)
		}
	case object:
		for i, m := range t {
			if m.key == "min" || m.key == "max" {
				t[i].val = convertValue(m.val, conv)
			}
		}
	}
	return v
}

// unitLabelled converts an object whose numbers are in the unit it names:
// value, min, max and bands (values), excess (a difference); the unit and
// the variable's name take their inch-pound spellings.
func unitLabelled(o object, inchUnit string, s outSpelling) object {
	diff := s.conv
	if s.diff != nil {
		diff = s.diff
	}
	for i, m := range o {
		switch m.key {
		case "unit":
			o[i].val = inchUnit
		case "variable":
			if name, ok := m.val.(string); ok && strings.HasSuffix(name, s.metric) {
				o[i].val = s.inchName(name)
			}
		case "value", "min", "max":
			o[i].val = convertValue(m.val, s.conv)
		case "excess":
			o[i].val = convertValue(m.val, diff)
		case "bands", "derived_bands":
			o[i].val = convertValue(m.val, s.conv) // each band's min and max
		}
	}
	return o
}
