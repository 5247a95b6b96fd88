package db_test

import (
	"context"
	"fmt"
	"slices"
	"strings"
	"testing"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestImportFlagsAsCreated: an import part judges its coupons by the
// ranges and stale records read with its plan, and writes the very flags
// a single create (Store.CreateCoupon, the reference) writes for the same
// coupon: with no ranges yet, with derived ranges (231 A and 26 V above the
// supporting PQR's range, rangesPQRData) and once a correction of the
// supporting PQR has made them stale, when each range flag says so.
// RecheckFlags then recomputes every stored flag and finds them all.
func TestImportFlagsAsCreated(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	// flagsOf names a coupon's flags without what differs between two coupons.
	flagsOf := func(mark string) []string {
		var out []string
		for _, f := range procedureFlags(t, s, site, p.ID) {
			c, err := s.Coupon(ctx, site, f.SubjectID, 0)
			if err != nil {
				t.Fatal(err)
			}
			if c.CouponMark != mark {
				continue
			}
			value := "none"
			if f.Value != nil {
				value = fmt.Sprint(*f.Value)
			}
			out = append(out, fmt.Sprintf("%s %s %s %s", f.Kind, f.Variable, value, f.Detail))
		}
		slices.Sort(out)
		return out
	}
	round := func(name string, wantStale bool) {
		imported, created := "IMP-"+name, "ONE-"+name
		res, err := s.ImportCoupons(ctx, a, []db.ImportCoupon{{Row: 2, Data: rangesCoupon(p.ID, imported, 231, 26)}}, true)
		if err != nil || res.Created != 1 {
			t.Fatalf("%s: import = %+v, %v", name, res, err)
		}
		if _, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, created, 231, 26)); err != nil {
			t.Fatal(err)
		}
		got, want := flagsOf(imported), flagsOf(created)
		if !slices.Equal(got, want) {
			t.Errorf("%s: imported coupon's flags %q, created coupon's %q", name, got, want)
		}
		stale := slices.ContainsFunc(got, func(f string) bool { return strings.Contains(f, "the ranges are stale") })
		if stale != wantStale {
			t.Errorf("%s: flags %q say the ranges are stale: %v, want %v", name, got, stale, wantStale)
		}
	}
	round("none", false)
	if _, err := s.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	round("derived", false)
	if n := len(flagsOf("IMP-derived")); n < 2 {
		t.Errorf("%d flags on a coupon at 231 A and 26 V, want the current's and the voltage's range flags", n)
	}
	q, err := s.QualificationRecord(ctx, site, p.SupportingRecordIDs[0], 0)
	if err != nil {
		t.Fatal(err)
	}
	qd := q.QualificationRecordData
	qd.WelderID = "W-12"
	if _, err := s.CorrectQualificationRecord(ctx, a, q.ID, db.Change{BaseRevision: q.Revision, Reason: "welder misread"}, qd); err != nil {
		t.Fatal(err)
	}
	round("stale", true)
	if check, err := s.RecheckFlags(ctx, site); err != nil || !check.OK() {
		t.Errorf("RecheckFlags = %+v, %v; want every stored flag recomputed", check, err)
	}
}
