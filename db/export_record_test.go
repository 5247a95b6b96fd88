package db_test

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// The export writes each coupon revision's record straight from the row's
// raw values; the reference for every byte is encoding/json (the Go
// standard library) encoding the Coupon scanned from the same row, which is
// what the export wrote before and what its format is defined by.
func TestRecordEncoderMatchesEncodingJSON(t *testing.T) {
	ctx := context.Background()
	s := dbtest.Store(t)
	site := "rec-" + t.Name()
	conn := dbtest.Conn(t)
	// Rows written with SQL alone, to reach values the API would refuse
	// (they have no leaf; only their records are compared here).
	const cols = `site, id, revision, created_at, created_by, reason, voided, procedure_id, qualification_record_id,
		coupon_mark, welder_id, power_source_id, filler_lot, welded_on, joint_type, thickness_mm, pass_number, current_a,
		voltage_v, travel_speed_mm_s, wire_feed_speed_m_min, ctwd_mm, wire_diameter_mm, shielding_gas, polarity, position,
		preheat_c, interpass_c`
	for _, row := range []string{
		// every optional value absent, empty texts
		`'%s', gen_random_uuid(), 1, '2026-11-03 10:00:00+00', 'tech', '', false, gen_random_uuid(), NULL,
		 'C-1', 'W-1', '', '', '2026-11-03', 'butt', 6, 1, 180, 21, 5, NULL, NULL, NULL, '', NULL, '1G', NULL, NULL`,
		// every optional value present; texts JSON escapes; fractions that need 17 digits
		`'%s', gen_random_uuid(), 2, '1999-12-31 23:59:59.999999+00', 'a<b>&"q"\ ' || chr(8232) || chr(1) || 'é漢', 'fix: <x> & "y"', true,
		 NULL, gen_random_uuid(), 'C-2 ' || chr(8233), 'W/2\t', 'PS-2', 'L&2', '1999-12-31', 'fillet', 0.7000000000000001, 500, 1000.0/3,
		 59.99999999999999, 0.5, 29.999999999999996, 3.3000000000000003, 0.6, 'Ar-25CO2', 'DCEN', '3G', -20, 0`,
		// dates and times at the edges the encoders treat apart
		`'%s', gen_random_uuid(), 1, '2000-01-01 00:00:00+00', 'x', '', false, gen_random_uuid(), gen_random_uuid(),
		 'C-3', 'W-3', '', '', '2000-01-01', 'lap', 300, 1, 10, 5, 30, 30, 50, 4, '', 'AC', '4G', 350, 349.99999999999994`,
		`'%s', gen_random_uuid(), 1, '0001-01-01 00:00:00.000001+00', 'x', '', false, gen_random_uuid(), NULL,
		 'C-4', 'W-4', '', '', '0001-01-01', 'edge', 0.5, 1, 10, 5, 0.5, NULL, 3, NULL, '', NULL, '1F', -0.0, NULL`,
		`'%s', gen_random_uuid(), 1, '9999-12-31 23:59:59.999999+00', 'x', '', false, gen_random_uuid(), NULL,
		 'C-5', 'W-5', '', '', '9999-12-31', 'corner', 12.5, 2, 212.25, 23.1, 6.35, 8.9, 19.05, 1.143, '', NULL, '2F', 93.3, 260`,
		`'%s', gen_random_uuid(), 1, '1970-01-01 00:00:00.5+00', 'x', '', false, gen_random_uuid(), NULL,
		 'C-6', 'W-6', '', '', '1900-02-28', 'bead_on_plate', 1e-0, 3, 1e2, 1e1, 1, NULL, NULL, NULL, '', NULL, '1G', NULL, NULL`,
		// out of the range the driver takes: the encoder must decline it (the
		// scan fails, and with it the export, as before); the driver stops there, so it comes last
		`'%s', gen_random_uuid(), 1, 'infinity', 'x', '', false, gen_random_uuid(), NULL,
		 'C-7', 'W-7', '', '', 'infinity', 'butt', 6, 1, 180, 21, 5, NULL, NULL, NULL, '', NULL, '1G', NULL, NULL`,
	} {
		at := site
		if strings.Contains(row, "'infinity'") {
			at = site + "-inf"
		}
		q := "INSERT INTO coupons (" + cols + ") SELECT " + strings.Replace(row, "'%s'", "'"+at+"'", 1)
		if _, err := conn.Exec(ctx, q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	fast, slow, err := db.RecordJSONBothWays(ctx, s, site)
	if err != nil {
		t.Fatal(err)
	}
	fastInf, slowInf, err := db.RecordJSONBothWays(ctx, s, site+"-inf")
	if err != nil {
		t.Fatal(err)
	}
	fast, slow = append(fast, fastInf...), append(slow, slowInf...)
	if len(fast) != 7 {
		t.Fatalf("%d rows read, want 7", len(fast))
	}
	// The export itself (COPY in binary format, then the encoder) writes
	// the same records, and still fails where the driver cannot read a row.
	var out bytes.Buffer
	w := db.NewExportWriter(&out)
	if _, err := s.Export(ctx, site, w.Line); err != nil {
		t.Fatal(err)
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	var exported []string
	for _, line := range strings.Split(strings.TrimSpace(out.String()), "\n") {
		if strings.HasPrefix(line, `{"kind":"coupon","record":`) {
			exported = append(exported, strings.TrimSuffix(strings.TrimPrefix(line, `{"kind":"coupon","record":`), "}"))
		}
	}
	want := make([]string, 6)
	for i := range want {
		want[i] = string(slow[i])
	}
	slices.Sort(exported)
	slices.Sort(want)
	if !slices.Equal(exported, want) {
		t.Errorf("exported coupon records:\n%s\nencoding/json:\n%s", strings.Join(exported, "\n"), strings.Join(want, "\n"))
	}
	if _, err := s.Export(ctx, site+"-inf", func(string, any) error { return nil }); err == nil {
		t.Errorf("export of a coupon created at infinity succeeded; the driver cannot read such a time")
	}
	declined := 0
	for i := range fast {
		if fast[i] == nil {
			declined++
			t.Logf("row %d declined; the scan-and-encode path gives: %s", i, slow[i])
			continue
		}
		if !bytes.Equal(fast[i], slow[i]) {
			t.Errorf("row %d:\nencoder       %s\nencoding/json %s", i, fast[i], slow[i])
		}
	}
	if declined != 1 {
		t.Errorf("%d rows declined, want 1 (the infinite time)", declined)
	}
}

// appendJSONFloat against encoding/json (the Go standard library) on the
// cut-over points of its exponent form and on random finite doubles.
func TestAppendJSONFloatMatchesEncodingJSON(t *testing.T) {
	xs := []float64{0, math.Copysign(0, -1), 1, -1, 0.1, 1e-6, 9.99999e-7, 1e-7, 1e21, 9.999999999999999e20, 1e20,
		5e-324, math.MaxFloat64, math.SmallestNonzeroFloat64, 1e-9, 1.5e-10, 123456789012345680000, 1e100, -1e-100}
	r := rand.New(rand.NewPCG(1, 2))
	for len(xs) < 200000 {
		x := math.Float64frombits(r.Uint64())
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			xs = append(xs, x)
		}
		xs = append(xs, r.NormFloat64()*math.Pow(10, float64(r.IntN(50)-25)))
	}
	for _, x := range xs {
		want, err := json.Marshal(x)
		if err != nil {
			t.Fatal(err)
		}
		if got := db.AppendJSONFloat(nil, x); !bytes.Equal(got, want) {
			t.Fatalf("%v: got %s, encoding/json %s", x, got, want)
		}
	}
}
