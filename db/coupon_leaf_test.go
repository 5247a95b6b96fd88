package db_test

import (
	"context"
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestLeafFromValuesMatchesRow creates coupons whose values test how they
// are stored (every optional field left out, text of the longest accepted
// length in several scripts, binary64 values with no short decimal form and
// at their bounds, a welding day given as a time late in the evening east
// of UTC, a coupon of a qualification record only) and checks that the
// leaf each create logged, encoded from the values it sent, is the leaf of
// the row as stored: VerifyLog encodes every stored row again and compares
// it with its leaf hash (the RFC 9162 leaf hash of the fact, the log's
// definition). The values are fixtures, not reference data.
func TestLeafFromValuesMatchesRow(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	s := dbtest.Store(t)
	site := dbtest.Site(t)
	a := actor(site)
	p := mustProcedure(t, s, site)
	q, err := s.CreateQualificationRecord(ctx, a, rangesPQRData("PQR-"+uuid.NewString()[:8]))
	if err != nil {
		t.Fatal(err)
	}

	bare := couponData(p.ID, "LV-bare")
	bare.PowerSourceID, bare.FillerLot, bare.ShieldingGas = "", "", ""
	bare.WireFeedSpeedMPerMin, bare.CTWDMM, bare.WireDiameterMM, bare.Polarity, bare.PreheatC, bare.InterpassC = nil, nil, nil, nil, nil, nil

	long := couponData(p.ID, strings.Repeat("Ø", 63)+"1")
	long.WelderID = strings.Repeat("溶", 64)
	long.PowerSourceID = strings.Repeat("é", 64)
	long.FillerLot = "lot \"7\"\\ 'x' ≥ 1"
	long.ShieldingGas = strings.Repeat("g", 64)
	long.Position = "PA"

	odd := couponData(p.ID, "LV-odd")
	odd.CurrentA = math.Nextafter(180, 181)
	odd.VoltageV = 0.1 + 0.2 + 20 // no short decimal form
	odd.TravelSpeedMMPerS = 0.5   // the lower bound
	odd.ThicknessMM = 300         // the upper bound
	odd.PreheatC, odd.InterpassC = ptr(-20.0), ptr(350.0)
	odd.PassNumber = 500
	odd.WeldedOn = db.Date{Time: time.Date(2026, 3, 1, 23, 30, 0, 0, time.FixedZone("UTC+14", 14*3600))}

	record := couponData(p.ID, "LV-record")
	record.ProcedureID, record.QualificationRecordID = nil, &q.ID

	for _, c := range []db.CouponData{bare, long, odd, record} {
		got, err := s.CreateCoupon(ctx, a, c)
		if err != nil {
			t.Fatalf("CreateCoupon %s: %v", c.CouponMark, err)
		}
		read, err := s.Coupon(ctx, site, got.ID, 0)
		if err != nil {
			t.Fatal(err)
		}
		if read.WeldedOn.String() != db.DateOf(c.WeldedOn.Time).String() {
			t.Errorf("%s welded on %s, sent %s", c.CouponMark, read.WeldedOn, c.WeldedOn.Time)
		}
	}
	// A refused create (its mark taken) leaves no leaf behind: VerifyLog
	// below finds every leaf's row and every row's leaf.
	if _, err := s.CreateCoupon(ctx, a, couponData(p.ID, "LV-odd")); !errors.As(err, new(*db.DuplicateError)) {
		t.Fatalf("a second LV-odd: %v, want a DuplicateError", err)
	}
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Fatalf("VerifyLog = %+v (err %v), want ok: every coupon's leaf is its stored row's", v, err)
	}
}
