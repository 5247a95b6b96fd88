package db_test

import (
	"context"
	"fmt"
	"slices"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// listedCoupon is what the brute-force oracle below knows of one coupon.
type listedCoupon struct {
	id         uuid.UUID
	mark       string
	welder     string
	day        time.Time
	voided     bool
	acceptance string // "", accept, reject
}

// TestCouponListIsDerived writes coupons over several months with sections,
// corrections and voids, then checks every list filter (the month-merged
// welding-day ranges included, paged two at a time) against a brute-force
// filter of what was written, and that coupon_list equals its derivation
// from the records and the log; a row deleted behind the service's back
// shows in the recheck. The expectation is the list's own definition (the
// current revision of each coupon, in log order), not reference data.
func TestCouponListIsDerived(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := mustProcedure(t, s, site)
	var all []*listedCoupon
	day0 := time.Date(2026, 7, 28, 0, 0, 0, 0, time.UTC)
	for i := range 12 {
		d := couponData(p.ID, fmt.Sprintf("CL-%02d", i))
		d.WelderID = []string{"W-1", "W-2", "W-3"}[i%3]
		d.WeldedOn = db.DateOf(day0.AddDate(0, 0, 9*i)) // late July to early November
		c, err := s.CreateCoupon(ctx, a, d)
		if err != nil {
			t.Fatal(err)
		}
		all = append(all, &listedCoupon{id: c.ID, mark: d.CouponMark, welder: d.WelderID, day: d.WeldedOn.Time})
	}
	section := func(i int, name, acceptance string) db.Measurement {
		m, err := s.CreateMeasurement(ctx, a, measurementData(all[i].id, name, acceptance))
		if err != nil {
			t.Fatal(err)
		}
		return m
	}
	section(0, "A", "accept")
	section(1, "A", "accept")
	section(1, "B", "reject")
	all[0].acceptance, all[1].acceptance = "accept", "reject"
	// A rejected section corrected to accept, and one voided: both coupons accept.
	m := section(2, "A", "reject")
	d := measurementData(all[2].id, "A", "accept")
	if _, err := s.CorrectMeasurement(ctx, a, m.ID, db.Change{BaseRevision: 1, Reason: "re-etched"}, d); err != nil {
		t.Fatal(err)
	}
	section(3, "A", "accept")
	m = section(3, "B", "reject")
	if _, err := s.VoidMeasurement(ctx, a, m.ID, db.Change{BaseRevision: 1, Reason: "wrong coupon"}); err != nil {
		t.Fatal(err)
	}
	all[2].acceptance, all[3].acceptance = "accept", "accept"
	// A correction moves a coupon to the end of the log with a new welder; a void hides one.
	cd := couponData(p.ID, all[4].mark)
	cd.WelderID, cd.WeldedOn = "W-9", db.DateOf(all[4].day)
	if _, err := s.CorrectCoupon(ctx, a, all[4].id, db.Change{BaseRevision: 1, Reason: "welder misread"}, cd); err != nil {
		t.Fatal(err)
	}
	all[4].welder = "W-9"
	moved := all[4]
	all = append(slices.Delete(all, 4, 5), moved)
	voided := all[5]
	if _, err := s.VoidCoupon(ctx, a, voided.id, db.Change{BaseRevision: 1, Reason: "entered twice"}); err != nil {
		t.Fatal(err)
	}
	voided.voided = true
	all = append(slices.Delete(all, 5, 6), voided)

	from, to := db.DateOf(time.Date(2026, 8, 20, 0, 0, 0, 0, time.UTC)), db.DateOf(time.Date(2026, 10, 1, 0, 0, 0, 0, time.UTC))
	// A range of at most a month is walked day by day, a longer one by month.
	dayFrom, dayTo := db.DateOf(time.Date(2026, 8, 1, 0, 0, 0, 0, time.UTC)), db.DateOf(time.Date(2026, 8, 25, 0, 0, 0, 0, time.UTC))
	inDays := func(c *listedCoupon) bool { return !c.day.Before(dayFrom.Time) && c.day.Before(dayTo.Time) }
	// A longer one walks its partial months day by day and its whole months by month.
	midTo, earlyTo := db.DateOf(time.Date(2026, 10, 10, 0, 0, 0, 0, time.UTC)), db.DateOf(time.Date(2026, 9, 5, 0, 0, 0, 0, time.UTC))
	for _, tc := range []struct {
		name string
		f    db.CouponFilter
		keep func(c *listedCoupon) bool
	}{
		{"none", db.CouponFilter{}, func(*listedCoupon) bool { return true }},
		{"include_voided", db.CouponFilter{IncludeVoided: true}, nil},
		{"welder_id", db.CouponFilter{WelderID: "W-2"}, func(c *listedCoupon) bool { return c.welder == "W-2" }},
		{"corrected welder", db.CouponFilter{WelderID: "W-9"}, func(c *listedCoupon) bool { return c.welder == "W-9" }},
		{"coupon_mark", db.CouponFilter{CouponMark: "CL-07"}, func(c *listedCoupon) bool { return c.mark == "CL-07" }},
		{"procedure_id", db.CouponFilter{ProcedureID: &p.ID}, func(*listedCoupon) bool { return true }},
		{"accept", db.CouponFilter{Acceptance: "accept"}, func(c *listedCoupon) bool { return c.acceptance == "accept" }},
		{"reject", db.CouponFilter{Acceptance: "reject"}, func(c *listedCoupon) bool { return c.acceptance == "reject" }},
		{"welded_from", db.CouponFilter{WeldedFrom: &from}, func(c *listedCoupon) bool { return !c.day.Before(from.Time) }},
		{"welded_to", db.CouponFilter{WeldedTo: &to}, func(c *listedCoupon) bool { return c.day.Before(to.Time) }},
		{"welded_from+to", db.CouponFilter{WeldedFrom: &from, WeldedTo: &to},
			func(c *listedCoupon) bool { return !c.day.Before(from.Time) && c.day.Before(to.Time) }},
		{"welded_from+to+include_voided", db.CouponFilter{WeldedFrom: &from, WeldedTo: &to, IncludeVoided: true}, nil},
		{"welded_to+accept", db.CouponFilter{WeldedTo: &to, Acceptance: "accept"},
			func(c *listedCoupon) bool { return c.day.Before(to.Time) && c.acceptance == "accept" }},
		{"welded_from+to(days)", db.CouponFilter{WeldedFrom: &dayFrom, WeldedTo: &dayTo}, inDays},
		{"welded_from+to(days)+reject", db.CouponFilter{WeldedFrom: &dayFrom, WeldedTo: &dayTo, Acceptance: "reject"},
			func(c *listedCoupon) bool { return inDays(c) && c.acceptance == "reject" }},
		{"welded_from+to(days)+accept", db.CouponFilter{WeldedFrom: &dayFrom, WeldedTo: &dayTo, Acceptance: "accept"},
			func(c *listedCoupon) bool { return inDays(c) && c.acceptance == "accept" }},
		{"welded_from+to(days, month, days)", db.CouponFilter{WeldedFrom: &from, WeldedTo: &midTo},
			func(c *listedCoupon) bool { return !c.day.Before(from.Time) && c.day.Before(midTo.Time) }},
		{"welded_to(months, days)", db.CouponFilter{WeldedTo: &earlyTo}, func(c *listedCoupon) bool { return c.day.Before(earlyTo.Time) }},
		{"welded_to(months, days)+reject", db.CouponFilter{WeldedTo: &earlyTo, Acceptance: "reject"},
			func(c *listedCoupon) bool { return c.day.Before(earlyTo.Time) && c.acceptance == "reject" }},
		{"welded_from+welder_id", db.CouponFilter{WeldedFrom: &from, WelderID: "W-1"},
			func(c *listedCoupon) bool { return !c.day.Before(from.Time) && c.welder == "W-1" }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var want []string
			for _, c := range all {
				keep := tc.keep == nil
				if !keep {
					keep = !c.voided && tc.keep(c)
				}
				if tc.f.IncludeVoided && tc.keep == nil {
					keep = tc.f.WeldedFrom == nil || !c.day.Before(from.Time) && c.day.Before(to.Time)
				}
				if keep {
					want = append(want, c.mark)
				}
			}
			got := followPages(t, 20, func(cursor string) (db.Page[db.Coupon], error) {
				return s.Coupons(ctx, site, tc.f, cursor, 2)
			}, func(c db.Coupon) string { return c.CouponMark })
			if !slices.Equal(got, want) {
				t.Errorf("Coupons(%s) in pages of 2 = %v, want %v (log order)", tc.name, got, want)
			}
		})
	}

	checkRecheck(t, s.RecheckCouponList, site, "coupon_list", all[0].id)
}
