package db_test

import (
	"context"
	"slices"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestCouponListScansByPosition checks that every shape of the coupons
// page's statement (the key walk with and without filters, the walk by
// day, the walk by day and month) returns its columns in the order of the
// listedCoupon fields, each under the field's own column name, and that
// the addresses the list scans a row into are those fields' in the same
// order: the list scans rows by position, so a column or a field added to
// one and not the other, or in another place, must fail here. The expectation
// is the service's own struct tags, not reference data.
func TestCouponListScansByPosition(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	day := func(y int, m time.Month, d int) *db.Date {
		v := db.DateOf(time.Date(y, m, d, 0, 0, 0, 0, time.UTC))
		return &v
	}
	id := uuid.New()
	for name, cf := range map[string]db.CouponFilter{
		"no filter":          {},
		"voided too":         {IncludeVoided: true},
		"equality filters":   {ProcedureID: &id, WelderID: "W-1", Acceptance: "reject"},
		"a week by day":      {WeldedFrom: day(2026, 3, 2), WeldedTo: day(2026, 3, 9), Acceptance: "accept"},
		"months and days":    {WeldedFrom: day(2026, 1, 15), WeldedTo: day(2026, 6, 10)},
		"unbounded by month": {WeldedFrom: day(2026, 1, 1)},
	} {
		cols, fields, targeted, err := db.CouponListColumns(context.Background(), s, site, cf)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if !slices.Equal(cols, fields) {
			t.Errorf("%s: the statement's columns\n%v\ndo not match the fields scanned by position\n%v", name, cols, fields)
		}
		for i, ok := range targeted {
			if !ok {
				t.Errorf("%s: scan target %d is not the address of field %d (%v)", name, i, i, fields[min(i, len(fields)-1)])
			}
		}
	}
}

// TestCouponListRawScan stores coupons with every optional field present
// and absent, and text beyond ASCII, and checks that a page's rows are all
// decoded from their raw values (scanRaw) into what pgx's own scan, the
// reference, gives for the same rows.
func TestCouponListRawScan(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	ctx := context.Background()
	p := mustProcedure(t, s, site)
	full := couponData(p.ID, "RAW-1")
	full.FillerLot = "Los «7» <&> 溶接"
	bare := couponData(p.ID, "RAW-2")
	bare.WireFeedSpeedMPerMin, bare.CTWDMM, bare.WireDiameterMM, bare.Polarity, bare.PreheatC = nil, nil, nil, nil, nil
	bare.ShieldingGas, bare.PowerSourceID = "", ""
	for _, c := range []db.CouponData{full, bare} {
		if _, err := s.CreateCoupon(ctx, actor(site), c); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := s.Coupons(ctx, site, db.CouponFilter{}, "", 50); err != nil { // waits for the log's sequencer
		t.Fatal(err)
	}
	rows, taken, diffs, err := db.CouponListRawScan(ctx, s, site, db.CouponFilter{})
	if err != nil {
		t.Fatal(err)
	}
	if rows != 2 || taken != rows || diffs != nil {
		t.Errorf("%d rows, %d decoded raw, want 2 and 2; differences from pgx's scan: %v", rows, taken, diffs)
	}
}
