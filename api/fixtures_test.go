package api_test

import (
	"fmt"
	"sync/atomic"
)

// The request bodies below are plausible GMAW values on carbon steel for
// exercising storage and HTTP round trips; they are fixtures, not reference data.
// Each gives every field of its input schema in metric units.

var fixtureSeq atomic.Int64

// uniq returns a fresh label with the given prefix, for fields that must be
// unique per site (procedure code, record number, coupon mark).
func uniq(prefix string) string { return fmt.Sprintf("%s-%04d", prefix, fixtureSeq.Add(1)) }

func procedureBody(code string, pqrIDs ...string) map[string]any {
	ids := []any{}
	for _, id := range pqrIDs {
		ids = append(ids, id)
	}
	return map[string]any{
		"code": code, "title": "Fillet welds, carbon steel, short circuit", "process": "GMAW",
		"filler_classification": "ER70S-6", "wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2",
		"polarity": "DCEP", "transfer_mode": "short_circuit", "positions": []any{"1F", "2F"},
		"base_metal_group": "carbon steel", "thickness_min_mm": 3.0, "thickness_max_mm": 12.0,
		"min_penetration_mm": 1.0, "status": "qualified", "supporting_record_ids": ids,
	}
}

func qualificationRecordBody(number string) map[string]any {
	return map[string]any{
		"record_number": number, "process": "GMAW", "welded_on": "2026-10-14", "welder_id": "W-07",
		"filler_classification": "ER70S-6", "wire_diameter_mm": 1.2, "shielding_gas": "Ar-10CO2",
		"polarity": "DCEP", "transfer_mode": "spray", "position": "1G", "base_metal_group": "carbon steel",
		"thickness_mm": 12.0, "current_a": 280.0, "voltage_v": 29.0, "travel_speed_mm_s": 6.0,
		"wire_feed_speed_m_min": 9.5, "ctwd_mm": 19.0, "preheat_c": 20.0, "interpass_c": 150.0,
		"visual_result": "pass", "bend_result": "pass", "tensile_result": "pass", "macro_result": "pass",
		"tensile_strength_mpa": 512.0, "outcome": "pass", "remarks": "fixture record", "min_penetration_mm": 1.0,
	}
}

func couponBody(procedureID, pqrID, mark string) map[string]any {
	b := map[string]any{
		"procedure_id": procedureID, "coupon_mark": mark, "welder_id": "W-07", "power_source_id": "PS-2",
		"filler_lot": "L2231", "welded_on": "2026-11-03", "joint_type": "fillet", "thickness_mm": 6.0,
		"pass_number": 1, "current_a": 180.0, "voltage_v": 21.0, "travel_speed_mm_s": 5.0,
		"wire_feed_speed_m_min": 7.6, "ctwd_mm": 15.0, "wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2",
		"polarity": "DCEP", "position": "2F", "preheat_c": 20.0, "interpass_c": 120.0,
	}
	if pqrID != "" {
		b["qualification_record_id"] = pqrID
	}
	return b
}

func measurementBody(section string) map[string]any {
	return map[string]any{
		"section": section, "penetration_mm": 1.8, "bead_width_mm": 7.5, "reinforcement_mm": 1.2,
		"leg1_mm": 6.1, "leg2_mm": 5.9, "throat_mm": 4.2, "fused_area_mm2": 21.5,
		"acceptance": "accept", "inspector": "QC-3", "remark": "fixture section",
	}
}

// mustQualificationRecord stores a fixture PQR and returns its id.
func (e *testEnv) mustQualificationRecord() string {
	e.t.Helper()
	return e.create("/v1/qualification-records", "engineer", qualificationRecordBody(uniq("PQR")))["id"].(string)
}

// mustProcedure stores a fixture WPS and returns its id.
func (e *testEnv) mustProcedure() string {
	e.t.Helper()
	return e.create("/v1/procedures", "engineer", procedureBody(uniq("WPS")))["id"].(string)
}

// mustCoupon stores a fixture coupon on the procedure and returns its id.
func (e *testEnv) mustCoupon(procedureID string) string {
	e.t.Helper()
	return e.create("/v1/coupons", "technician", couponBody(procedureID, "", uniq("C")))["id"].(string)
}

// mustMeasurement stores a fixture section on the coupon and returns its id.
func (e *testEnv) mustMeasurement(couponID string) string {
	e.t.Helper()
	return e.create("/v1/coupons/"+couponID+"/measurements", "technician", measurementBody("A"))["id"].(string)
}

// clone copies a request body so a case can change it.
func clone(b map[string]any) map[string]any {
	c := make(map[string]any, len(b))
	for k, v := range b {
		c[k] = v
	}
	return c
}

// withRevision adds a correction's base revision and reason to a body.
func withRevision(b map[string]any, base int, reason string) map[string]any {
	c := clone(b)
	c["base_revision"], c["reason"] = base, reason
	return c
}
