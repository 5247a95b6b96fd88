package lab

import (
	"strings"
	"unicode"
	"unicode/utf8"

	"etchlog/db"
	"etchlog/predict"
)

// variableLabels names the checked variables in words (flag variables are
// stored field names).
var variableLabels = map[string]string{
	"current_a": "Current", "voltage_v": "Voltage", "travel_speed_mm_s": "Travel speed",
	"wire_feed_speed_m_min": "Wire feed speed", "ctwd_mm": "CTWD", "wire_diameter_mm": "Wire diameter",
	"thickness_mm": "Thickness", "preheat_c": "Preheat", "interpass_c": "Interpass temperature",
	"heat_input_j_mm": "Heat input", "shielding_gas": "Shielding gas", "transfer_mode": "Transfer mode",
	"polarity": "Polarity", "filler_classification": "Filler classification", "position": "Position",
	"base_metal_group": "Base-metal group", "penetration_mm": "Penetration",
	"predicted_penetration_mm": "Predicted penetration",
}

// VariableLabel names a variable or field in words ("Current" for current_a).
func VariableLabel(name string) string {
	if l, ok := variableLabels[name]; ok {
		return l
	}
	if q, ok := predict.LookupQuantity(name); ok && q.Description != "" {
		return q.Description
	}
	return capitalise(strings.ReplaceAll(name, "_", " "))
}

// FlagSentence says a flag in one sentence, in units u, naming source (the
// document whose qualified range was crossed, e.g. "WPS-TR-101 rev 3"; ""
// says "the qualified range"):
//
//	Current 235 A is above the qualified 160–220 A of WPS-TR-101 rev 3
//	Preheat was not recorded, so it cannot be checked
//
// Requirement, suspect-units and model-prediction flags already carry their
// own plain sentence (detail), which is returned capitalised.
func FlagSentence(u Units, f db.Flag, source string) string {
	label := VariableLabel(f.Variable)
	of := ""
	if source != "" {
		of = " of " + source
	}
	dir := ""
	if f.Direction != nil {
		dir = *f.Direction
	}
	switch {
	case f.Kind == "not_checkable" && strings.HasPrefix(f.Detail, "no qualified range"):
		why := strings.TrimSpace(strings.TrimPrefix(f.Detail, "no qualified range:"))
		why = strings.ReplaceAll(why, f.Variable, inSentence(label))
		s := label + " has no qualified range" + of
		if why != "" {
			s += " (" + why + ")"
		}
		return s + ", so it cannot be checked"
	case f.Kind == "not_checkable" && f.Variable == "heat_input_j_mm":
		return "Heat input needs voltage, current and travel speed, and one was not recorded, so it cannot be checked"
	case f.Kind == "not_checkable" && strings.Contains(f.Detail, "is not recorded"):
		return label + " was not recorded, so it cannot be checked"
	case dir == "not_allowed" && f.ValueText != nil:
		s := label + " “" + *f.ValueText + "” is not qualified by " + orRange(source)
		if len(f.Allowed) > 0 {
			s += " (qualified: " + strings.Join(f.Allowed, ", ") + ")"
		}
		return s
	case (f.Kind == "range" || f.Kind == "model" && f.Variable == "heat_input_j_mm") && f.Value != nil && (dir == "above" || dir == "below"):
		return label + " " + FormatQuantity(u, f.Variable, f.Value) + " is " + dir + " the qualified " + bounds(u, f) + of
	}
	return capitalise(f.Detail)
}

// bounds writes a flag's qualified band: "160–220 A", "maximum 220 A".
func bounds(u Units, f db.Flag) string {
	switch {
	case f.Min != nil && f.Max != nil:
		lo := FormatQuantity(u, f.Variable, f.Min)
		hi := FormatQuantity(u, f.Variable, f.Max)
		if unit := UnitLabel(u, f.Variable); unit != "" {
			lo = strings.TrimSuffix(lo, " "+unit)
		}
		return lo + "–" + hi
	case f.Max != nil:
		return "maximum " + FormatQuantity(u, f.Variable, f.Max)
	case f.Min != nil:
		return "minimum " + FormatQuantity(u, f.Variable, f.Min)
	}
	return "range"
}

// inSentence writes a label inside a sentence: "travel speed", "CTWD".
func inSentence(label string) string {
	if strings.ToUpper(label) == label {
		return label
	}
	r, n := utf8.DecodeRuneInString(label)
	return string(unicode.ToLower(r)) + label[n:]
}

func orRange(source string) string {
	if source == "" {
		return "the qualified range"
	}
	return source
}

func capitalise(s string) string {
	r, n := utf8.DecodeRuneInString(s)
	if n == 0 {
		return s
	}
	return string(unicode.ToUpper(r)) + s[n:]
}
