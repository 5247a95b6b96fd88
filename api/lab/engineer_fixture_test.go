package lab_test

import (
	"fmt"
	"math"
	"net/http"
	"sync/atomic"
)

// engineerSeq keeps marks and codes unique across the tests of the package.
var engineerSeq atomic.Int64

// engineerShop is a fillet procedure with a supporting qualification record,
// derived ranges, eight coupons with one section each and a jackson_free
// fit over them (not activated). The coupons are fixtures: settings varied
// independently and penetrations from the Jackson law with the published
// exponents and a made-up K, with small made-up departures and one coupon
// made 60 % deeper so that the diagnostics mark it. The procedure requires
// 1.9 mm, which two coupons (1.82 and 1.86 mm) miss: requirement flags.
type engineerShop struct {
	proc, cal string
	coupons   []string
}

// jacksonFixtureK is a made-up K (mm at 1 A, 1 mm/s, 1 V) giving about 2 mm
// at 175 A, 20.5 V and 5 mm/s.
const jacksonFixtureK = 0.026

// newEngineerShop stores the shop through the API.
func newEngineerShop(e *labEnv) engineerShop {
	e.t.Helper()
	n := engineerSeq.Add(1)
	joint := "fillet"
	pqr := e.call(http.MethodPost, "/v1/qualification-records", "engineer", map[string]any{
		"record_number": fmt.Sprintf("PQR-ENG-%d", n), "process": "GMAW", "welded_on": "2026-09-01", "welder_id": "W-04",
		"filler_classification": "ER70S-6", "wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2", "polarity": "DCEP",
		"transfer_mode": "short_circuit", "position": "2F", "base_metal_group": "carbon steel", "thickness_mm": 9.5,
		"current_a": 175.0, "voltage_v": 20.5, "travel_speed_mm_s": 5.0, "wire_feed_speed_m_min": 7.6, "ctwd_mm": 12.7,
		"preheat_c": 18.0, "visual_result": "pass", "bend_result": "not_tested", "tensile_result": "not_tested",
		"macro_result": "pass", "outcome": "pass", "remarks": "fixture record",
	}, http.StatusCreated)["id"].(string)
	s := engineerShop{}
	s.proc = e.call(http.MethodPost, "/v1/procedures", "engineer", map[string]any{
		"code": fmt.Sprintf("WPS-ENG-%d", n), "title": "Fillet welds, carbon steel, short circuit", "process": "GMAW",
		"filler_classification": "ER70S-6", "wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2", "polarity": "DCEP",
		"transfer_mode": "short_circuit", "positions": []any{"1F", "2F"}, "base_metal_group": "carbon steel",
		"thickness_min_mm": 3.0, "thickness_max_mm": 19.0, "min_penetration_mm": 1.9, "status": "qualified",
		"supporting_record_ids": []any{pqr},
	}, http.StatusCreated)["id"].(string)
	e.call(http.MethodPost, "/v1/procedures/"+s.proc+"/ranges", "engineer", map[string]any{"rule_set_id": "structural-style-gmaw"}, http.StatusCreated)
	current := []float64{160, 190, 170, 185, 165, 195, 175, 180}
	voltage := []float64{19.5, 20, 21.5, 19, 21, 20.5, 22, 20}
	speed := []float64{4.5, 5.5, 4.8, 6, 5.2, 4.2, 5.8, 5}
	departure := []float64{1.05, 0.96, 1.02, 0.97, 1.04, 0.99, 1.01, 1.6}
	for i := range current {
		c := e.call(http.MethodPost, "/v1/coupons", "technician", map[string]any{
			"procedure_id": s.proc, "coupon_mark": fmt.Sprintf("ENG-%d-%02d", n, i+1), "welder_id": "W-04",
			"power_source_id": "PS-1", "filler_lot": "L1", "welded_on": "2026-09-08", "joint_type": joint,
			"thickness_mm": 9.5, "pass_number": 1, "current_a": current[i], "voltage_v": voltage[i],
			"travel_speed_mm_s": speed[i], "wire_feed_speed_m_min": 6.5 + 0.04*(current[i]-160), "ctwd_mm": 13.0, "position": "2F", "preheat_c": 18.0,
		}, http.StatusCreated)["id"].(string)
		pen := jacksonFixtureK * math.Pow(current[i], 4.0/3) * math.Pow(speed[i], -1.0/3) * math.Pow(voltage[i], -2.0/3) * departure[i]
		e.call(http.MethodPost, "/v1/coupons/"+c+"/measurements", "technician", map[string]any{
			"section": "A", "penetration_mm": math.Round(pen*100) / 100, "bead_width_mm": 7.0, "reinforcement_mm": 1.0,
			"acceptance": "accept", "inspector": "QC-1",
		}, http.StatusCreated)
		s.coupons = append(s.coupons, c)
	}
	s.cal = e.call(http.MethodPost, "/v1/calibrations", "engineer", map[string]any{
		"model": "jackson_free", "process": "GMAW", "wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2",
		"joint_type": joint, "procedure_id": s.proc,
	}, http.StatusCreated)["id"].(string)
	return s
}
