package lab_test

import (
	"encoding/json"
	"testing"

	"github.com/google/go-cmp/cmp"

	"etchlog/api/lab"
)

// TestDiff checks the field-level differences between two revisions as an
// auditor reads them. Conversions for the inch-pound cases are exact:
// 1 in = 25.4 mm and t/°F = 1.8·t/°C + 32 (NIST SP 811, appendix B.8 and
// section B.9), so 12.7 mm is 0.5 in and 20 °C is 68 °F.
func TestDiff(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		name     string
		units    lab.Units
		old, new string
		want     []lab.FieldChange
	}{
		{"Quantity", lab.Metric,
			`{"id":"x","revision":1,"voltage_v":21,"welder_id":"W-07"}`,
			`{"id":"x","revision":2,"voltage_v":21.5,"welder_id":"W-07"}`,
			[]lab.FieldChange{{Field: "voltage_v", Label: "Voltage", Old: "21 V", New: "21.5 V"}}},
		{"SameNumberOtherSpelling", lab.Metric,
			`{"current_a":180,"thickness_mm":6}`, `{"current_a":180.0,"thickness_mm":6e0}`, nil},
		{"InchPound", lab.InchPound,
			`{"thickness_mm":6.35,"preheat_c":10}`, `{"thickness_mm":12.7,"preheat_c":20}`,
			[]lab.FieldChange{
				{Field: "thickness_mm", Label: "Thickness", Old: "0.25 in", New: "0.5 in"},
				{Field: "preheat_c", Label: "Preheat", Old: "50 °F", New: "68 °F"},
			}},
		{"TextAndAddedAndRemoved", lab.Metric,
			`{"welder_id":"W-07","preheat_c":20,"remark":"fixture"}`,
			`{"welder_id":"W-08","interpass_c":120,"remark":""}`,
			[]lab.FieldChange{
				{Field: "welder_id", Label: "Welder id", Old: "W-07", New: "W-08"},
				{Field: "interpass_c", Label: "Interpass temperature", Old: "not recorded", New: "120 °C"},
				{Field: "remark", Label: "Remark", Old: "fixture", New: "blank"},
				{Field: "preheat_c", Label: "Preheat", Old: "20 °C", New: "not recorded"},
			}},
		{"NullIsAbsent", lab.Metric, `{"ctwd_mm":null}`, `{}`, nil},
		{"ListAndVoid", lab.Metric,
			`{"positions":["1F","2F"],"voided":false}`, `{"positions":["1F","2F","3F"],"voided":true}`,
			[]lab.FieldChange{
				{Field: "positions", Label: "Positions", Old: "1F, 2F", New: "1F, 2F, 3F"},
				{Field: "voided", Label: "Voided", Old: "no", New: "yes"},
			}},
		{"BookkeepingLeftOut", lab.Metric,
			`{"revision":1,"created_at":"2026-11-03T08:00:00Z","created_by":"a","reason":"","sign_off":null,"inherited":["polarity"]}`,
			`{"revision":2,"created_at":"2026-11-04T08:00:00Z","created_by":"b","reason":"typo","sign_off":{"id":"s"},"inherited":[]}`,
			nil},
	} {
		t.Run(c.name, func(t *testing.T) {
			got, err := lab.Diff(c.units, json.RawMessage(c.old), json.RawMessage(c.new))
			if err != nil {
				t.Fatal(err)
			}
			if d := cmp.Diff(c.want, got); d != "" {
				t.Errorf("Diff(%s, %s) (-want +got):\n%s", c.old, c.new, d)
			}
		})
	}
	if _, err := lab.Diff(lab.Metric, json.RawMessage(`[1]`), json.RawMessage(`{}`)); err == nil {
		t.Error("Diff of a non-object: no error")
	}
}
