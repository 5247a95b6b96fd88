package api

import (
	"errors"
	"reflect"
	"slices"
	"strings"
	"testing"

	"etchlog/db"
)

// TestImportFastReadMatches reads rows whose cells take every kind of value
// a spreadsheet may hold (empty, spaced, exponents, hex, infinities,
// control characters, invalid UTF-8, dates out of range or impossible, ids
// in each form uuid accepts, words in other case, text at and above its
// length, numbers at and beyond the registry's bounds) one cell at a time,
// in a metric header and one with inch-pound spellings, through the direct
// reading and through read (the JSON body's path): whenever the direct
// reading takes a row, read takes it too, with the very same values; and a
// plain good row is taken directly. So the direct reading never decides
// anything read would decide otherwise.
func TestImportFastReadMatches(t *testing.T) {
	s := &Server{validate: newValidator()}
	metric := []string{
		"procedure_id", "qualification_record_id", "coupon_mark", "welder_id", "power_source_id", "filler_lot",
		"welded_on", "joint_type", "thickness_mm", "pass_number", "current_a", "voltage_v", "travel_speed_mm_s",
		"wire_feed_speed_m_min", "ctwd_mm", "wire_diameter_mm", "shielding_gas", "polarity", "position",
		"preheat_c", "interpass_c",
		"section", "penetration_mm", "bead_width_mm", "reinforcement_mm", "leg1_mm", "leg2_mm", "throat_mm",
		"fused_area_mm2", "acceptance", "inspector", "remark",
	}
	inch := slices.Clone(metric)
	for i, c := range inch {
		inch[i] = map[string]string{"thickness_mm": "thickness_in", "travel_speed_mm_s": "travel_speed_in_min",
			"preheat_c": "preheat_f", "penetration_mm": "penetration_in", "wire_diameter_mm": "wire_diameter_in"}[c]
		if inch[i] == "" {
			inch[i] = c
		}
	}
	good := map[string]string{
		"procedure_id": "0193c2a4-0000-7000-8000-00000000beef", "coupon_mark": "C-1", "welder_id": "W-07",
		"power_source_id": "PS-2", "filler_lot": "L2231", "welded_on": "2026-11-03", "joint_type": "fillet",
		"thickness_mm": "6", "pass_number": "1", "current_a": "180", "voltage_v": "21", "travel_speed_mm_s": "5",
		"wire_feed_speed_m_min": "7.6", "ctwd_mm": "15", "wire_diameter_mm": "0.9", "shielding_gas": "Ar-25CO2",
		"polarity": "DCEP", "position": "2F", "preheat_c": "20", "interpass_c": "120",
		"thickness_in": "0.25", "travel_speed_in_min": "12", "preheat_f": "68", "penetration_in": "0.07", "wire_diameter_in": "0.035",
		"section": "A", "penetration_mm": "1.8", "bead_width_mm": "7.5", "reinforcement_mm": "1.2", "leg1_mm": "6.1",
		"leg2_mm": "5.9", "throat_mm": "4.2", "fused_area_mm2": "21.5", "acceptance": "accept", "inspector": "QC-3",
		"remark": "fixture section",
	}
	cells := []string{"", " ", "0", "-0", "1", "1.5", " 7 ", "7 ", "1e3", "1E-3", "1e400", "-1e400", "NaN", "inf", "+Inf",
		"0x10", "1_000", "abc", "12 A", "\x01", "a\tb", "a\nb", "\xff\xfe", "Ø-7", "  W-1  ", strings.Repeat("x", 8),
		strings.Repeat("x", 9), strings.Repeat("x", 32), strings.Repeat("x", 33), strings.Repeat("x", 64), strings.Repeat("x", 65),
		"2026-11-03", "2026-02-30", "2026-13-01", "3000-01-01", "1899-12-31", "1900-01-01", "26-11-03", "2026-11-03T00:00:00Z",
		"0193C2A4-0000-7000-8000-00000000BEEF", "{0193c2a4-0000-7000-8000-00000000beef}", "urn:uuid:0193c2a4-0000-7000-8000-00000000beef",
		"0193c2a400007000800000000000beef", "0193c2a4-0000-7000-8000-00000000bee", "DCEP", "dcep", "AC", "accept", "Accept", "reject",
		"fillet", "butt ", "9007199254740993", "1e20", "300", "300.0000000001", "0.5", "0.4999", "-20", "-20.5", "350", "500", "501",
		"1000", "1000.5", "0.6", "4", "4.0001", "100", "100.5", "10000", "50", "50.1", "-10", "-10.1", "30", "30.1", "11.81", "11.82", "0.0197",
		"0.01968", "1.1811", "1.1812", "1.9685", "662", "663", "-4", "-4.1"}
	for _, header := range [][]string{metric, inch} {
		im, err := newImportColumns(header)
		if err != nil {
			t.Fatal(err)
		}
		if im.fast[0] == nil || im.fast[1] == nil {
			t.Fatalf("header %v: no direct reading of a side", header)
		}
		row := func(j int, cell string) []string {
			rec := make([]string, len(header))
			for k, h := range header {
				rec[k] = good[h]
			}
			if j >= 0 {
				rec[j] = cell
			}
			return rec
		}
		compare := func(rec []string, section bool) (fastOK, slowOK bool) {
			var fast, slow any = &db.CouponData{}, &db.CouponData{}
			side := 0
			if section {
				fast, slow, side = &db.MeasurementData{}, &db.MeasurementData{}, 1
			}
			fastOK = im.fast[side].read(s, rec, fast)
			b := importBatch{s: s, cols: im}
			slowOK = b.read(2, rec, section, slow)
			if fastOK && (!slowOK || !reflect.DeepEqual(fast, slow)) {
				t.Errorf("header %s, row %q: the direct reading took %+v, read gives %+v with faults %+v",
					header[8], rec, fast, slow, b.faults)
			}
			return fastOK, slowOK
		}
		for _, section := range []bool{false, true} {
			if fastOK, slowOK := compare(row(-1, ""), section); !fastOK || !slowOK {
				t.Errorf("header %s: the good row (section %v) is read directly %v, by read %v; want both", header[8], section, fastOK, slowOK)
			}
		}
		taken, refused := 0, 0
		for j := range header {
			for _, cell := range cells {
				for _, section := range []bool{false, true} {
					fastOK, slowOK := compare(row(j, cell), section)
					if fastOK {
						taken++
					}
					if !slowOK {
						refused++
					}
				}
			}
		}
		if taken == 0 || refused == 0 {
			t.Errorf("header %s: %d rows taken directly, %d refused by read: want some of each", header[8], taken, refused)
		}
	}
}

// TestImportRowsInHalves: rows read in two halves cut where couponStart
// says a coupon starts give the coupons and faults of one reading, for a
// cut before every row of a file with repeated and empty marks, coupons
// with and without sections, rows that are not CSV between a coupon's rows,
// rows with too few cells, a coupon column that differs on a later row, and
// a refused value.
func TestImportRowsInHalves(t *testing.T) {
	s := &Server{validate: newValidator()}
	header := []string{"procedure_id", "coupon_mark", "welded_on", "joint_type", "thickness_mm", "current_a",
		"voltage_v", "travel_speed_mm_s", "position", "section", "penetration_mm", "acceptance"}
	im, err := newImportColumns(header)
	if err != nil {
		t.Fatal(err)
	}
	p := "0193a1b2-0000-7000-8000-000000000001"
	row := func(mark, current, section string) []string {
		return []string{p, mark, "2026-11-03", "fillet", "6.35", current, "21", "5.08", "2F", section, "1.2", "accept"}
	}
	notCSV := errors.New("bare quote")
	recs := []csvRow{
		{2, row("A-1", "170", "A"), nil}, {3, row("A-1", "170", "B"), nil}, {4, nil, notCSV}, {5, row("A-1", "170", "C"), nil},
		{6, row("A-2", "170", ""), nil}, {7, row("", "170", "A"), nil}, {8, row("", "170", "B"), nil},
		{9, row("A-3", "5000", "A"), nil}, {10, row("A-3", "171", "B"), nil}, {11, []string{p, "A-4"}, nil},
		{12, row("A-4", "170", "A"), nil}, {13, row("A-1", "170", "D"), nil}, {14, nil, notCSV}, {15, row("A-5", "170", "A"), nil},
		{16, row("A-5", "170", "A"), nil}, {17, row("A-6", "170", "A"), nil},
	}
	whole := s.readSome(im, recs)
	cuts := 0
	for i := range recs {
		m := im.couponStart(recs, i)
		if m <= 0 {
			continue
		}
		cuts++
		halves := s.readSome(im, recs[:m]).then(s.readSome(im, recs[m:]))
		if !reflect.DeepEqual(halves.coupons, whole.coupons) || !reflect.DeepEqual(halves.faults, whole.faults) {
			t.Errorf("cut before row %d: coupons %+v faults %+v; one reading: %+v %+v", recs[m].row, halves.coupons, halves.faults, whole.coupons, whole.faults)
		}
	}
	if cuts < len(recs)/2 || len(whole.faults) < 4 {
		t.Errorf("%d cuts, %d faults: the file should be cut in many places and have faults of each kind", cuts, len(whole.faults))
	}
}
