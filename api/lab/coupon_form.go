package lab

import (
	"encoding/json"
	"net/url"
	"slices"
	"strconv"
	"strings"

	"etchlog/db"
	"etchlog/predict"
)

// couponFields are the coupon's fields as the entry form lays them out: the
// API's field names (a quantity under its stored name, spelled in the
// chosen units on the form), the label in words and the group.
var couponFields = []formField{
	{"coupon_mark", "Coupon mark", "Coupon"}, {"welder_id", "Welder", "Coupon"},
	{"welded_on", "Welded on (YYYY-MM-DD)", "Coupon"}, {"joint_type", "Joint type", "Coupon"},
	{"position", "Position", "Coupon"}, {"pass_number", "Pass number", "Coupon"},
	{"thickness_mm", "Base-metal thickness", "Coupon"},
	{"current_a", "Current", "Welding"}, {"voltage_v", "Voltage", "Welding"},
	{"travel_speed_mm_s", "Travel speed", "Welding"}, {"wire_feed_speed_m_min", "Wire feed speed", "Welding"},
	{"ctwd_mm", "CTWD (contact tip to work)", "Welding"}, {"preheat_c", "Preheat", "Welding"},
	{"interpass_c", "Interpass temperature", "Welding"},
	{"wire_diameter_mm", "Wire diameter", "Consumables"}, {"polarity", "Polarity", "Consumables"},
	{"shielding_gas", "Shielding gas", "Consumables"}, {"filler_lot", "Filler lot", "Consumables"},
	{"power_source_id", "Power source", "Consumables"},
}

// formField is one field of a record form.
type formField struct{ Name, Label, Group string }

// fieldGroup is a fieldset of a record form.
type fieldGroup struct {
	Legend string
	Fields []formField
}

// groups lays fields out in their fieldsets, in order.
func groups(fields []formField) []fieldGroup {
	var out []fieldGroup
	for _, f := range fields {
		if len(out) == 0 || out[len(out)-1].Legend != f.Group {
			out = append(out, fieldGroup{Legend: f.Group})
		}
		out[len(out)-1].Fields = append(out[len(out)-1].Fields, f)
	}
	return out
}

// numeric reports whether the API takes field name as a number.
func numeric(name string) bool {
	_, ok := predict.LookupQuantity(name)
	return ok
}

// body turns a submitted form into the API's JSON: every non-empty field
// under the name it was sent (the API converts a unit's spelling), numbers
// as numbers. A number the page cannot read is sent as the text typed, so
// the API refuses it in its own words; the page adds no rule.
func body(form url.Values, fields []formField, u Units) map[string]any {
	b := map[string]any{}
	for _, f := range fields {
		name := FieldName(u, f.Name)
		v := strings.TrimSpace(form.Get(name))
		if v == "" {
			continue
		}
		if numeric(name) {
			if x, err := strconv.ParseFloat(v, 64); err == nil {
				b[name] = x
				continue
			}
		}
		b[name] = v
	}
	return b
}

// formValues writes a record's fields as a form shows them: quantities in
// the chosen units at 12 significant digits (as the API writes them, so a
// value sent back unchanged is the value read), the others as text. Fields
// in skip stay empty (a coupon's inherited values, which it leaves to its
// procedure).
func formValues(record any, fields []formField, u Units, skip []string) url.Values {
	raw, _ := json.Marshal(record)
	var m map[string]any
	_ = json.Unmarshal(raw, &m)
	out := url.Values{}
	for _, f := range fields {
		v, ok := m[f.Name]
		if !ok || v == nil || slices.Contains(skip, f.Name) {
			continue
		}
		name := FieldName(u, f.Name)
		if x, isNum := v.(float64); isNum {
			if q, known := predict.LookupQuantity(f.Name); known {
				s, _ := spellingFor(u, q)
				x = s.FromStored(x)
			}
			out.Set(name, strconv.FormatFloat(x, 'g', 12, 64))
			continue
		}
		out.Set(name, toText(v))
	}
	return out
}

// toText writes a non-number JSON value as a form shows it.
func toText(v any) string {
	if s, ok := v.(string); ok {
		return s
	}
	b, _ := json.Marshal(v)
	return string(b)
}

// procedureDefaults are the values a chosen procedure gives a new coupon's
// form: its wire diameter, polarity, shielding gas and first position.
func procedureDefaults(pr db.Procedure, u Units) url.Values {
	v := formValues(pr, []formField{{Name: "wire_diameter_mm"}, {Name: "polarity"}, {Name: "shielding_gas"}}, u, nil)
	if len(pr.Positions) > 0 {
		v.Set("position", pr.Positions[0])
	}
	return v
}
