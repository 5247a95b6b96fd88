package db_test

import (
	"context"
	"errors"
	"strings"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/predict"
)

// TestKeptInputsFollowOtherProcesses: two stores on two pools share one
// database, as two etchlog processes would. Store A creates coupons of a
// procedure and keeps what they are judged by; store B then changes it
// (derives ranges, narrows them, corrects the supporting PQR, corrects and
// voids the procedure) and commits, and A's next create is judged by B's
// change, not by what A kept. A create that reads afresh is told by the
// count of judgement changes it reads first (a kept create compares it in
// its write); the flags expected are the ranges' own (current 231 A above the PQR's 200 A
// by more than the rule set allows; narrowed to 210 A).
func TestKeptInputsFollowOtherProcesses(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	sB, site := dbtest.Store(t), dbtest.Site(t)
	sA, tr := countedStore(t)
	a := actor(site)
	p := rangesProcedure(t, sB, a)
	n := 0
	// create writes a coupon through A at current i and returns it with its
	// range flags and whether it judged by kept inputs.
	create := func(i float64, edit func(*db.CouponData)) (db.Coupon, []db.Flag, bool, error) {
		t.Helper()
		n++
		d := rangesCoupon(p.ID, "KEPT-"+uuid.NewString()[:8], i, 24)
		if edit != nil {
			edit(&d)
		}
		tr.reset()
		c, err := sA.CreateCoupon(ctx, a, d)
		tr.mu.Lock()
		fresh := strings.Contains(strings.Join(tr.log, "\n"), "SELECT count(*) FROM judgement_changes")
		tr.mu.Unlock()
		if err != nil {
			return c, nil, !fresh, err
		}
		page, err := sB.Flags(ctx, site, db.FlagFilter{SubjectID: &c.ID, Kind: "range"}, "", 50)
		if err != nil {
			t.Fatal(err)
		}
		return c, page.Items, !fresh, nil
	}
	mustCreate := func(i float64, wantFlags int, wantKept bool) db.Coupon {
		t.Helper()
		c, flags, kept, err := create(i, nil)
		if err != nil {
			t.Fatalf("create %d: %v", n, err)
		}
		if len(flags) != wantFlags {
			t.Errorf("create %d at %v A: %d range flags %+v, want %d", n, i, len(flags), flags, wantFlags)
		}
		if kept != wantKept {
			t.Errorf("create %d: kept inputs used %v, want %v", n, kept, wantKept)
		}
		return c
	}
	mustCreate(231, 0, false) // no ranges yet: read afresh, then kept
	mustCreate(231, 0, true)
	mustCreate(231, 0, true)

	if _, err := sB.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	mustCreate(231, 1, false) // judged by B's ranges
	mustCreate(231, 1, true)
	mustCreate(205, 0, true)

	if _, err := sB.NarrowRanges(ctx, a, p.ID, 1, "customer limits current", []predict.Narrowing{{Variable: predict.VarCurrent, Max: ptr(200.0)}}); err != nil {
		t.Fatal(err)
	}
	mustCreate(205, 1, false) // above B's narrowed maximum
	mustCreate(205, 1, true)

	// A correction of the supporting PQR makes the ranges stale; the flags say so.
	q, err := sB.QualificationRecord(ctx, site, p.SupportingRecordIDs[0], 0)
	if err != nil {
		t.Fatal(err)
	}
	qd := q.QualificationRecordData
	qd.WelderID = "W-12"
	if _, err := sB.CorrectQualificationRecord(ctx, a, q.ID, db.Change{BaseRevision: q.Revision, Reason: "welder misread"}, qd); err != nil {
		t.Fatal(err)
	}
	_, flags, _, err := create(205, nil)
	if err != nil || len(flags) != 1 || !strings.Contains(flags[0].Detail, "the ranges are stale") {
		t.Errorf("create after B corrected the PQR: %v, flags %+v; want one flag saying the ranges are stale", err, flags)
	}

	// A correction of the procedure's wire diameter reaches a coupon that leaves it out.
	pd := p.ProcedureData
	pd.WireDiameterMM = 1.0
	if p, err = sB.CorrectProcedure(ctx, a, p.ID, db.Change{BaseRevision: p.Revision, Reason: "wire size"}, pd); err != nil {
		t.Fatal(err)
	}
	mustCreate(205, 1, false)
	c, _, _, err := create(205, func(d *db.CouponData) { d.WireDiameterMM = nil })
	if err != nil || c.WireDiameterMM == nil || *c.WireDiameterMM != 1.0 {
		t.Errorf("create leaving the wire out after B corrected it: %v, wire %v; want 1.0 mm inherited", err, c.WireDiameterMM)
	}

	// A void of the procedure refuses A's next create.
	if _, err := sB.VoidProcedure(ctx, a, p.ID, db.Change{BaseRevision: p.Revision, Reason: "withdrawn"}); err != nil {
		t.Fatal(err)
	}
	var fe *db.FieldError
	if _, _, _, err := create(205, nil); !errors.As(err, &fe) || fe.Field != "procedure_id" {
		t.Errorf("create after B voided the procedure: %v; want a refusal naming procedure_id", err)
	}
	if v, err := sB.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Errorf("VerifyLog = %+v, %v; want ok", v, err)
	}
}

// TestKeptInputsFollowActivation: an activation committed by store B makes
// store A's next create of the process read its inputs afresh (the
// calibration in use is one of them), and the create after that keeps them
// again.
func TestKeptInputsFollowActivation(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	sB, site := dbtest.Store(t), dbtest.Site(t)
	sA, tr := countedStore(t)
	p := mustProcedure(t, sB, site)
	storeFitCoupons(t, sA, site, p.ID, 6)
	fresh := func(i int) bool {
		t.Helper()
		tr.reset()
		if _, err := sA.CreateCoupon(ctx, actor(site), fitCoupon(p.ID, 100+i)); err != nil {
			t.Fatal(err)
		}
		tr.mu.Lock()
		defer tr.mu.Unlock()
		return strings.Contains(strings.Join(tr.log, "\n"), "SELECT count(*) FROM judgement_changes")
	}
	if fresh(0) {
		t.Error("a create after six of the same procedure read its inputs afresh")
	}
	cal, err := sB.CreateCalibration(ctx, actor(site), spec(db.CalibrationJacksonFixed))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := sB.ActivateCalibration(ctx, actor(site), cal.ID, "first shop fit"); err != nil {
		t.Fatal(err)
	}
	if !fresh(1) {
		t.Error("the first create after B's activation judged by what A kept")
	}
	if fresh(2) {
		t.Error("the second create after B's activation read its inputs afresh")
	}
	if v, err := sB.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Errorf("VerifyLog = %+v, %v; want ok", v, err)
	}
}
