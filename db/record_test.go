package db_test

import (
	"context"
	"errors"
	"fmt"
	"sync"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

func TestRoundTrip(t *testing.T) {
	t.Parallel()
	s := dbtest.Store(t)
	site := dbtest.Site(t)
	ctx := context.Background()
	a := actor(site)

	qr, err := s.CreateQualificationRecord(ctx, a, db.QualificationRecordData{
		RecordNumber: "PQR-1", Process: "GMAW", WeldedOn: couponData(uuid.New(), "x").WeldedOn, WelderID: "W-07",
		FillerClassification: "ER70S-6", WireDiameterMM: 1.2, ShieldingGas: "Ar-10CO2", Polarity: "DCEP",
		TransferMode: "spray", Position: "1G", BaseMetalGroup: "carbon steel", ThicknessMM: 12,
		CurrentA: 280, VoltageV: 29, TravelSpeedMMPerS: 6, WireFeedSpeedMPerMin: ptr(9.5), CTWDMM: ptr(19.0),
		VisualResult: "pass", BendResult: "pass", TensileResult: "pass", MacroResult: "pass",
		TensileStrengthMPa: ptr(512.0), Outcome: "pass",
	})
	if err != nil {
		t.Fatalf("CreateQualificationRecord: %v", err)
	}
	pd := procedureData("WPS-RT")
	pd.SupportingRecordIDs = []uuid.UUID{qr.ID}
	p, err := s.CreateProcedure(ctx, a, pd)
	if err != nil {
		t.Fatalf("CreateProcedure: %v", err)
	}
	c, err := s.CreateCoupon(ctx, a, couponData(p.ID, "C-RT-1"))
	if err != nil {
		t.Fatalf("CreateCoupon: %v", err)
	}
	m, err := s.CreateMeasurement(ctx, a, measurementData(c.ID, "A", "accept"))
	if err != nil {
		t.Fatalf("CreateMeasurement: %v", err)
	}

	check := func(name string, got, want any) {
		t.Helper()
		if d := cmp.Diff(want, got, cmpopts.EquateApproxTime(0)); d != "" {
			t.Errorf("%s round trip (-want +got):\n%s", name, d)
		}
	}
	gq, err := s.QualificationRecord(ctx, site, qr.ID, 0)
	if err != nil {
		t.Fatal(err)
	}
	check("qualification record", gq, qr)
	gp, err := s.Procedure(ctx, site, p.ID, 0)
	if err != nil {
		t.Fatal(err)
	}
	check("procedure", gp, p)
	gc, err := s.Coupon(ctx, site, c.ID, 0)
	if err != nil {
		t.Fatal(err)
	}
	check("coupon", gc, c)
	gm, err := s.Measurement(ctx, site, m.ID, 0)
	if err != nil {
		t.Fatal(err)
	}
	check("measurement", gm, m)

	// Another site sees none of it.
	if _, err := s.Coupon(ctx, site+"-other", c.ID, 0); !errors.Is(err, db.ErrNotFound) {
		t.Errorf("Coupon(other site) error = %v, want ErrNotFound", err)
	}
}

func TestCorrectionKeepsOldRevision(t *testing.T) {
	t.Parallel()
	s := dbtest.Store(t)
	site := dbtest.Site(t)
	ctx := context.Background()
	p := mustProcedure(t, s, site)
	c, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, "C-COR-1"))
	if err != nil {
		t.Fatal(err)
	}
	fixed := c.CouponData
	fixed.CurrentA = 185
	c2, err := s.CorrectCoupon(ctx, actor(site), c.ID, db.Change{BaseRevision: 1, Reason: "meter read 185 A, typed 180"}, fixed)
	if err != nil {
		t.Fatalf("CorrectCoupon: %v", err)
	}
	if c2.Revision != 2 {
		t.Errorf("corrected revision = %d, want 2", c2.Revision)
	}
	old, err := s.Coupon(ctx, site, c.ID, 1)
	if err != nil || old.CurrentA != 180 {
		t.Errorf("revision 1 current = %v (err %v), want 180", old.CurrentA, err)
	}
	cur, _ := s.Coupon(ctx, site, c.ID, 0)
	if cur.CurrentA != 185 || cur.Reason == "" {
		t.Errorf("latest = %v A reason %q, want 185 A with the reason", cur.CurrentA, cur.Reason)
	}
	t.Run("ErrStaleBase", func(t *testing.T) {
		_, err := s.CorrectCoupon(ctx, actor(site), c.ID, db.Change{BaseRevision: 1, Reason: "again"}, fixed)
		if !errors.Is(err, db.ErrConflict) {
			t.Errorf("correction on stale base: err = %v, want ErrConflict", err)
		}
	})
	t.Run("ErrNoReason", func(t *testing.T) {
		_, err := s.CorrectCoupon(ctx, actor(site), c.ID, db.Change{BaseRevision: 2}, fixed)
		var fe *db.FieldError
		if !errors.As(err, &fe) || fe.Field != "reason" {
			t.Errorf("correction without reason: err = %v, want a FieldError on reason", err)
		}
	})
	t.Run("Void", func(t *testing.T) {
		v, err := s.VoidCoupon(ctx, actor(site), c.ID, db.Change{BaseRevision: 2, Reason: "coupon cut from wrong plate"})
		if err != nil || !v.Voided || v.Revision != 3 || v.CurrentA != 185 {
			t.Fatalf("VoidCoupon = rev %d voided %v current %v (err %v), want rev 3 voided with the values kept", v.Revision, v.Voided, v.CurrentA, err)
		}
		if _, err := s.CorrectCoupon(ctx, actor(site), c.ID, db.Change{BaseRevision: 3, Reason: "x"}, fixed); !errors.Is(err, db.ErrVoided) {
			t.Errorf("correcting a voided coupon: err = %v, want ErrVoided", err)
		}
		revs, err := s.CouponRevisions(ctx, site, c.ID)
		if err != nil || len(revs) != 3 {
			t.Errorf("CouponRevisions = %d revisions (err %v), want 3", len(revs), err)
		}
		list, _ := s.Coupons(ctx, site, db.CouponFilter{}, "", 0)
		if len(list.Items) != 0 {
			t.Errorf("default list shows %d voided coupons, want 0", len(list.Items))
		}
		list, _ = s.Coupons(ctx, site, db.CouponFilter{IncludeVoided: true}, "", 0)
		if len(list.Items) != 1 {
			t.Errorf("list with voided = %d coupons, want 1", len(list.Items))
		}
	})
}

func TestFailedWriteLeavesNothing(t *testing.T) {
	t.Parallel()
	s := dbtest.Store(t)
	site := dbtest.Site(t)
	ctx := context.Background()
	cd := couponData(uuid.New(), "C-FAIL-1") // the procedure does not exist
	_, err := s.CreateCoupon(ctx, actor(site), cd)
	var fe *db.FieldError
	if !errors.As(err, &fe) || fe.Field != "procedure_id" {
		t.Fatalf("coupon on missing procedure: err = %v, want FieldError procedure_id", err)
	}
	p := mustProcedure(t, s, site)
	bad := couponData(p.ID, "C-FAIL-2")
	bad.CurrentA = 5000 // refused by the database's check rule
	if _, err := s.CreateCoupon(ctx, actor(site), bad); !errors.Is(err, db.ErrInvalid) {
		t.Fatalf("coupon at 5000 A: err = %v, want ErrInvalid", err)
	}
	list, err := s.Coupons(ctx, site, db.CouponFilter{IncludeVoided: true}, "", 0)
	if err != nil || len(list.Items) != 0 {
		t.Errorf("after failed writes: %d coupons (err %v), want 0", len(list.Items), err)
	}
	ev := auditEvents(t, s, site, db.AuditFilter{Entity: "coupon"})
	if len(ev) != 0 {
		t.Errorf("after failed writes: %d coupon audit events, want 0", len(ev))
	}
	v, err := s.VerifyLog(ctx, site, nil)
	if err != nil || !v.OK {
		t.Errorf("VerifyLog = %+v (err %v), want ok", v, err)
	}
}

func TestPaginationWhileAdding(t *testing.T) {
	t.Parallel()
	s := dbtest.Store(t)
	site := dbtest.Site(t)
	ctx := context.Background()
	p := mustProcedure(t, s, site)
	for i := 0; i < 25; i++ {
		if _, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("C-PG-%02d", i))); err != nil {
			t.Fatal(err)
		}
	}
	// A writer keeps adding coupons while a reader pages through 7 at a time.
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		for i := 0; i < 15; i++ {
			if _, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("C-PG-new-%02d", i))); err != nil {
				t.Error(err)
				return
			}
		}
	}()
	seen := map[uuid.UUID]int{}
	cursor := ""
	for pages := 0; ; pages++ {
		pg, err := s.Coupons(ctx, site, db.CouponFilter{}, cursor, 7)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range pg.Items {
			seen[c.ID]++
		}
		if pg.Next == "" {
			t.Fatalf("page %d has no cursor to resume from", pages)
		}
		if len(pg.Items) < 7 { // a short page is the end of what is logged now
			break
		}
		cursor = pg.Next
		if pages > 100 {
			t.Fatal("pagination does not end")
		}
	}
	wg.Wait()
	for id, n := range seen {
		if n != 1 {
			t.Errorf("coupon %s seen %d times, want once", id, n)
		}
	}
	all, _ := s.Coupons(ctx, site, db.CouponFilter{}, "", 0)
	// Every coupon that existed before paging began must have been seen.
	if len(seen) < 25 || len(seen) > len(all.Items) {
		t.Errorf("saw %d distinct coupons, want between 25 and %d", len(seen), len(all.Items))
	}
}

func TestCouponFilters(t *testing.T) {
	t.Parallel()
	s := dbtest.Store(t)
	site := dbtest.Site(t)
	ctx := context.Background()
	p := mustProcedure(t, s, site)
	good, _ := s.CreateCoupon(ctx, actor(site), couponData(p.ID, "C-F-1"))
	bad, _ := s.CreateCoupon(ctx, actor(site), couponData(p.ID, "C-F-2"))
	other := couponData(p.ID, "C-F-3")
	other.WelderID = "W-99"
	_, _ = s.CreateCoupon(ctx, actor(site), other)
	for _, m := range []db.MeasurementData{
		measurementData(good.ID, "A", "accept"), measurementData(bad.ID, "A", "accept"), measurementData(bad.ID, "B", "reject"),
	} {
		if _, err := s.CreateMeasurement(ctx, actor(site), m); err != nil {
			t.Fatal(err)
		}
	}
	for _, tc := range []struct {
		name string
		f    db.CouponFilter
		want []string
	}{
		{"All", db.CouponFilter{}, []string{"C-F-1", "C-F-2", "C-F-3"}},
		{"Accepted", db.CouponFilter{Acceptance: "accept"}, []string{"C-F-1"}},
		{"Rejected", db.CouponFilter{Acceptance: "reject"}, []string{"C-F-2"}},
		{"Welder", db.CouponFilter{WelderID: "W-99"}, []string{"C-F-3"}},
		{"Procedure", db.CouponFilter{ProcedureID: &p.ID}, []string{"C-F-1", "C-F-2", "C-F-3"}},
		{"DateRange", db.CouponFilter{WeldedFrom: ptr(db.DateOf(good.WeldedOn.AddDate(0, 0, 1)))}, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			pg, err := s.Coupons(ctx, site, tc.f, "", 0)
			if err != nil {
				t.Fatal(err)
			}
			got := marksOf(pg.Items)
			if d := cmp.Diff(tc.want, got); d != "" {
				t.Errorf("Coupons(%+v) marks (-want +got):\n%s", tc.f, d)
			}
		})
	}
}

// marksOf is the coupon marks of a page's coupons, in its order (nil for none).
func marksOf(cs []db.Coupon) []string {
	var marks []string
	for _, c := range cs {
		marks = append(marks, c.CouponMark)
	}
	return marks
}
