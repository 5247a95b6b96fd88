package lab_test

import (
	"fmt"
	"net/http"
	"sync/atomic"
)

var serial atomic.Int64

// uniq makes a mark or code unique within the test database.
func uniq(prefix string) string { return fmt.Sprintf("%s-%d", prefix, serial.Add(1)) }

// rangedProcedure stores a PQR welded at 200 A, 29 V, 6 mm/s and a WPS it
// supports, derives the WPS's qualified ranges with the built-in
// structural-style rule set (current ±10 %: 180–220 A; preheat ruled), and
// returns the WPS's id and code.
func (e *labEnv) rangedProcedure() (id, code string) {
	e.t.Helper()
	pqr := e.call(http.MethodPost, "/v1/qualification-records", "engineer", map[string]any{
		"record_number": uniq("PQR"), "process": "GMAW", "welded_on": "2026-10-14", "welder_id": "W-07",
		"filler_classification": "ER70S-6", "wire_diameter_mm": 1.2, "shielding_gas": "Ar-10CO2",
		"polarity": "DCEP", "transfer_mode": "spray", "position": "1G", "base_metal_group": "carbon steel",
		"thickness_mm": 12.0, "current_a": 200.0, "voltage_v": 29.0, "travel_speed_mm_s": 6.0,
		"wire_feed_speed_m_min": 9.5, "ctwd_mm": 19.0, "preheat_c": 20.0, "interpass_c": 150.0,
		"visual_result": "pass", "bend_result": "pass", "tensile_result": "pass", "macro_result": "pass",
		"tensile_strength_mpa": 512.0, "outcome": "pass", "remarks": "lab page fixture", "min_penetration_mm": 1.0,
	}, http.StatusCreated)["id"].(string)
	code = uniq("WPS-LAB")
	id = e.call(http.MethodPost, "/v1/procedures", "engineer", map[string]any{
		"code": code, "title": "Butt welds, carbon steel, spray", "process": "GMAW",
		"filler_classification": "ER70S-6", "wire_diameter_mm": 1.2, "shielding_gas": "Ar-10CO2",
		"polarity": "DCEP", "transfer_mode": "spray", "positions": []any{"1G", "1F"},
		"base_metal_group": "carbon steel", "thickness_min_mm": 6.0, "thickness_max_mm": 24.0,
		"min_penetration_mm": 1.0, "status": "qualified", "supporting_record_ids": []any{pqr},
	}, http.StatusCreated)["id"].(string)
	e.call(http.MethodPost, "/v1/procedures/"+id+"/ranges", "engineer", map[string]any{"rule_set_id": "structural-style-gmaw"}, http.StatusCreated)
	return id, code
}
