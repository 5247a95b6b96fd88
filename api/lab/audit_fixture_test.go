package lab_test

import (
	"fmt"
	"net/http"
)

// auditShop is a procedure supported by one qualification record, with
// ranges derived, three coupons naming both with two sections each, one
// coupon's voltage corrected with a reason, one section voided, a coupon
// welded above the qualified current (a range flag), and the record and
// the procedure signed off. The values are fixtures: plausible GMAW fillet
// settings on carbon steel, not reference data.
type auditShop struct {
	proc, pqr, number, code string
	marks                   []string
}

// Reasons and statements the record view must show as written.
const (
	auditCorrection = "voltage re-read from the power source log"
	auditVoid       = "section cut through a start"
	auditStatement  = "Witnessed the macro-etch and bend tests; results as recorded."
)

// newAuditShop stores the shop through the API.
func newAuditShop(e *labEnv) auditShop {
	e.t.Helper()
	n := engineerSeq.Add(1)
	s := auditShop{number: fmt.Sprintf("PQR-AUD-%d", n), code: fmt.Sprintf("WPS-AUD-%d", n)}
	s.pqr = e.call(http.MethodPost, "/v1/qualification-records", "engineer", map[string]any{
		"record_number": s.number, "process": "GMAW", "welded_on": "2026-09-01", "welder_id": "W-04",
		"filler_classification": "ER70S-6", "wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2", "polarity": "DCEP",
		"transfer_mode": "short_circuit", "position": "2F", "base_metal_group": "carbon steel", "thickness_mm": 9.5,
		"current_a": 175.0, "voltage_v": 20.5, "travel_speed_mm_s": 5.0, "wire_feed_speed_m_min": 7.6, "ctwd_mm": 12.7,
		"preheat_c": 18.0, "visual_result": "pass", "bend_result": "pass", "tensile_result": "not_tested",
		"macro_result": "pass", "outcome": "pass", "remarks": "fixture record",
	}, http.StatusCreated)["id"].(string)
	s.proc = e.call(http.MethodPost, "/v1/procedures", "engineer", map[string]any{
		"code": s.code, "title": "Fillet welds, carbon steel, short circuit", "process": "GMAW",
		"filler_classification": "ER70S-6", "wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2", "polarity": "DCEP",
		"transfer_mode": "short_circuit", "positions": []any{"1F", "2F"}, "base_metal_group": "carbon steel",
		"thickness_min_mm": 3.0, "thickness_max_mm": 19.0, "status": "qualified", "supporting_record_ids": []any{s.pqr},
	}, http.StatusCreated)["id"].(string)
	e.call(http.MethodPost, "/v1/procedures/"+s.proc+"/ranges", "engineer", map[string]any{"rule_set_id": "structural-style-gmaw"}, http.StatusCreated)
	currents := []float64{170, 180, 200} // 200 A is above 175 A + 10 %
	var firstSection string
	for i, a := range currents {
		mark := fmt.Sprintf("AUD-%d-%02d", n, i+1)
		body := map[string]any{
			"procedure_id": s.proc, "qualification_record_id": s.pqr, "coupon_mark": mark, "welder_id": "W-04",
			"power_source_id": "PS-1", "filler_lot": "L1", "welded_on": "2026-09-08", "joint_type": "fillet",
			"thickness_mm": 9.5, "pass_number": 1, "current_a": a, "voltage_v": 21.0, "travel_speed_mm_s": 5.0,
			"wire_feed_speed_m_min": 7.2, "ctwd_mm": 13.0, "position": "2F", "preheat_c": 18.0,
		}
		c := e.call(http.MethodPost, "/v1/coupons", "technician", body, http.StatusCreated)["id"].(string)
		for _, sec := range []string{"A", "B"} {
			m := e.call(http.MethodPost, "/v1/coupons/"+c+"/measurements", "technician", map[string]any{
				"section": sec, "penetration_mm": 2.1, "bead_width_mm": 7.0, "reinforcement_mm": 1.0,
				"acceptance": "accept", "inspector": "QC-1",
			}, http.StatusCreated)["id"].(string)
			if i == 0 && sec == "B" {
				firstSection = m
			}
		}
		if i == 0 {
			body["voltage_v"], body["base_revision"], body["reason"] = 21.5, 1, auditCorrection
			e.call(http.MethodPut, "/v1/coupons/"+c, "technician", body, http.StatusOK)
		}
		s.marks = append(s.marks, mark)
	}
	e.call(http.MethodPost, "/v1/measurements/"+firstSection+"/void", "technician", map[string]any{"base_revision": 1, "reason": auditVoid}, http.StatusOK)
	sign := map[string]any{"revision": 1, "statement": auditStatement}
	e.call(http.MethodPost, "/v1/qualification-records/"+s.pqr+"/sign-off", "engineer", sign, http.StatusCreated)
	e.call(http.MethodPost, "/v1/procedures/"+s.proc+"/sign-off", "engineer", sign, http.StatusCreated)
	return s
}
