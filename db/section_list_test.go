package db_test

import (
	"context"
	"fmt"
	"slices"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// listedSection is what the brute-force oracle below knows of one section.
type listedSection struct {
	id         uuid.UUID
	name       string
	coupon     uuid.UUID
	acceptance string
	voided     bool
}

// TestSectionListIsDerived writes sections on three coupons with
// corrections (of the verdict, and to another coupon) and voids, then checks
// every sections list filter, alone and combined, paged two at a time,
// against a brute-force filter of what was written, and that section_list
// equals its derivation from the records and the log; a row deleted behind
// the service's back shows in the recheck. The expectation is the list's own
// definition (the current revision of each section, in log order), not
// reference data.
func TestSectionListIsDerived(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := mustProcedure(t, s, site)
	var couponIDs []uuid.UUID
	for i := range 3 {
		c, err := s.CreateCoupon(ctx, a, couponData(p.ID, fmt.Sprintf("SL-%d", i)))
		if err != nil {
			t.Fatal(err)
		}
		couponIDs = append(couponIDs, c.ID)
	}
	var all []*listedSection // in log order of each section's current revision
	for i := range 12 {
		acceptance := "accept"
		if i%4 == 1 {
			acceptance = "reject"
		}
		name := fmt.Sprintf("S%02d", i)
		m, err := s.CreateMeasurement(ctx, a, measurementData(couponIDs[i%3], name, acceptance))
		if err != nil {
			t.Fatal(err)
		}
		all = append(all, &listedSection{id: m.ID, name: name, coupon: couponIDs[i%3], acceptance: acceptance})
	}
	// moveToEnd records a new revision of a section: it leaves its place
	// and is listed again at the end of the log.
	moveToEnd := func(name string) *listedSection {
		i := slices.IndexFunc(all, func(m *listedSection) bool { return m.name == name })
		moved := all[i]
		all = append(slices.Delete(all, i, i+1), moved)
		return moved
	}
	// A rejected section corrected to accept, an accepted one to reject.
	for _, c := range []struct{ name, acceptance string }{{"S01", "accept"}, {"S02", "reject"}} {
		sec := moveToEnd(c.name)
		if _, err := s.CorrectMeasurement(ctx, a, sec.id, db.Change{BaseRevision: 1, Reason: "re-etched"},
			measurementData(sec.coupon, sec.name, c.acceptance)); err != nil {
			t.Fatal(err)
		}
		sec.acceptance = c.acceptance
	}
	// A rejected section moved from the first coupon to the third.
	sec := moveToEnd("S09")
	if _, err := s.CorrectMeasurement(ctx, a, sec.id, db.Change{BaseRevision: 1, Reason: "wrong coupon"},
		measurementData(couponIDs[2], sec.name, sec.acceptance)); err != nil {
		t.Fatal(err)
	}
	sec.coupon = couponIDs[2]
	// A rejected section voided.
	sec = moveToEnd("S05")
	if _, err := s.VoidMeasurement(ctx, a, sec.id, db.Change{BaseRevision: 1, Reason: "entered twice"}); err != nil {
		t.Fatal(err)
	}
	sec.voided = true

	c0, c2 := couponIDs[0], couponIDs[2]
	for _, tc := range []struct {
		name string
		f    db.MeasurementFilter
		keep func(*listedSection) bool
	}{
		{"none", db.MeasurementFilter{}, func(*listedSection) bool { return true }},
		{"include_voided", db.MeasurementFilter{IncludeVoided: true}, nil},
		{"reject", db.MeasurementFilter{Acceptance: "reject"}, func(m *listedSection) bool { return m.acceptance == "reject" }},
		{"reject+include_voided", db.MeasurementFilter{Acceptance: "reject", IncludeVoided: true}, nil},
		{"accept", db.MeasurementFilter{Acceptance: "accept"}, func(m *listedSection) bool { return m.acceptance == "accept" }},
		{"coupon_id", db.MeasurementFilter{CouponID: &c0}, func(m *listedSection) bool { return m.coupon == c0 }},
		{"moved-to coupon", db.MeasurementFilter{CouponID: &c2}, func(m *listedSection) bool { return m.coupon == c2 }},
		{"coupon_id+reject", db.MeasurementFilter{CouponID: &c2, Acceptance: "reject"},
			func(m *listedSection) bool { return m.coupon == c2 && m.acceptance == "reject" }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var want []string
			for _, m := range all {
				keep := false
				switch {
				case tc.keep != nil:
					keep = !m.voided && tc.keep(m)
				case tc.f.Acceptance != "": // include_voided with a verdict
					keep = m.acceptance == tc.f.Acceptance
				default:
					keep = true
				}
				if keep {
					want = append(want, m.name)
				}
			}
			got := followPages(t, 20, func(cursor string) (db.Page[db.Measurement], error) {
				return s.Measurements(ctx, site, tc.f, cursor, 2)
			}, func(m db.Measurement) string { return m.Section })
			if !slices.Equal(got, want) {
				t.Errorf("Measurements(%s) in pages of 2 = %v, want %v (log order)", tc.name, got, want)
			}
		})
	}

	checkRecheck(t, s.RecheckSectionList, site, "section_list", all[0].id)
}
