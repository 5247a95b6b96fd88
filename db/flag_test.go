package db_test

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/predict"
)

// TestNarrowRecomputesFlags narrows the current range from [180, 220] A to
// [180, 210] A: the flags that depend on it change, the others do not, and a
// failure in the middle of a recompute leaves the previous flags in place.
func TestNarrowRecomputesFlags(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	if _, err := s.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	mk := func(mark string, i, v float64) uuid.UUID {
		c, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, mark+p.Code, i, v))
		if err != nil {
			t.Fatal(err)
		}
		return c.ID
	}
	_, b, c := mk("A", 185, 24), mk("B", 215, 24), mk("C", 231, 26)
	recs, err := s.CreateProductionRecords(ctx, a, []db.ProductionRecordData{productionRow(p.ID, "W1", 190), productionRow(p.ID, "W2", 230)})
	if err != nil {
		t.Fatal(err)
	}
	p2 := recs[1].ID
	before := flagsByKey(procedureFlags(t, s, site, p.ID))
	wantBefore := []flagKey{{c, "current_a", "range"}, {c, "voltage_v", "range"}, {p2, "current_a", "range"}}
	if len(before) != len(wantBefore) {
		t.Fatalf("flags before narrowing = %v, want %v", before, wantBefore)
	}

	pr, err := s.NarrowRanges(ctx, a, p.ID, 1, "customer limits current", []predict.Narrowing{{Variable: predict.VarCurrent, Max: ptr(210.0)}})
	if err != nil {
		t.Fatal(err)
	}
	if pr.Version != 2 || pr.FlagsWritten != 4 {
		t.Errorf("NarrowRanges = version %d, %d flags written; want version 2, 4 flags", pr.Version, pr.FlagsWritten)
	}
	after := flagsByKey(procedureFlags(t, s, site, p.ID))
	for _, tc := range []struct {
		key    flagKey
		excess float64 // NaN: must equal the flag before
	}{
		{flagKey{b, "current_a", "range"}, 5},          // 215 − 210, new
		{flagKey{c, "current_a", "range"}, 21},         // 231 − 210, was 11
		{flagKey{p2, "current_a", "range"}, 20},        // 230 − 210, was 10
		{flagKey{c, "voltage_v", "range"}, math.NaN()}, // unaffected
	} {
		f, ok := after[tc.key]
		switch {
		case !ok:
			t.Errorf("after narrowing: no flag %v", tc.key)
		case math.IsNaN(tc.excess):
			if !sameFlag(f, before[tc.key]) {
				t.Errorf("unaffected flag %v changed:\nbefore %+v\nafter  %+v", tc.key, before[tc.key], f)
			}
		case math.Abs(*f.Excess-tc.excess) > 1e-9 || *f.Max != 210:
			t.Errorf("flag %v = excess %v max %v, want excess %v max 210", tc.key, *f.Excess, *f.Max, tc.excess)
		}
	}
	if len(after) != 4 {
		t.Errorf("after narrowing %d flags, want 4", len(after))
	}

	// Fail the next recompute when it writes its voltage flag (a test-only trigger).
	fn := "fail_flags_" + strings.ReplaceAll(uuid.NewString()[:8], "-", "")
	pool := superuser(t) // the service cannot create triggers
	if _, err := pool.Exec(ctx, fmt.Sprintf(`CREATE FUNCTION %[1]s() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN IF NEW.site = '%[2]s' AND NEW.ranges_version = 3 AND NEW.variable = 'voltage_v' THEN
		RAISE EXCEPTION 'injected failure'; END IF; RETURN NEW; END $$;
		CREATE TRIGGER %[1]s BEFORE INSERT ON flags FOR EACH ROW EXECUTE FUNCTION %[1]s();`, fn, strings.ReplaceAll(site, "'", "''"))); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		_, _ = pool.Exec(context.Background(), fmt.Sprintf("DROP TRIGGER %[1]s ON flags; DROP FUNCTION %[1]s()", fn))
	})
	if _, err := s.NarrowRanges(ctx, a, p.ID, 2, "tighter", []predict.Narrowing{{Variable: predict.VarCurrent, Max: ptr(205.0)}}); err == nil {
		t.Fatal("NarrowRanges with an injected failure succeeded")
	}
	kept := flagsByKey(procedureFlags(t, s, site, p.ID))
	for k, f := range after {
		if !sameFlag(kept[k], f) {
			t.Errorf("after a failed recompute flag %v = %+v, want the previous %+v", k, kept[k], f)
		}
	}
	if cur, _ := s.ProcedureRanges(ctx, site, p.ID, 0); cur.Version != 2 || len(kept) != len(after) {
		t.Errorf("after a failed recompute: ranges version %d, %d flags; want 2 and %d", cur.Version, len(kept), len(after))
	}
}

// TestCouponWritesKeepFlags: creating, correcting and voiding a coupon
// rewrites its flags in the same transaction.
func TestCouponWritesKeepFlags(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	if _, err := s.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	count := func() int { t.Helper(); return len(procedureFlags(t, s, site, p.ID)) }
	c, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, "K-"+p.Code, 231, 24))
	if err != nil || count() != 1 {
		t.Fatalf("create at 231 A: %v, %d flags; want 1", err, count())
	}
	if _, err := s.CorrectCoupon(ctx, a, c.ID, db.Change{BaseRevision: 1, Reason: "meter misread"}, rangesCoupon(p.ID, "K-"+p.Code, 200, 24)); err != nil || count() != 0 {
		t.Fatalf("correct to 200 A: %v, %d flags; want 0", err, count())
	}
	d := rangesCoupon(p.ID, "K-"+p.Code, 200, 24)
	d.WireFeedSpeedMPerMin = nil
	if _, err := s.CorrectCoupon(ctx, a, c.ID, db.Change{BaseRevision: 2, Reason: "WFS not logged"}, d); err != nil || count() != 1 {
		t.Fatalf("correct without WFS: %v, %d flags; want 1 (not_checkable)", err, count())
	}
	if _, err := s.VoidCoupon(ctx, a, c.ID, db.Change{BaseRevision: 3, Reason: "wrong procedure"}); err != nil || count() != 0 {
		t.Fatalf("void: %v, %d flags; want 0", err, count())
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Errorf("VerifyLog = %+v, %v; want ok", v, err)
	}
}

// TestProductionBatch: 500 rows in one batch are stored and flagged; a batch
// with one bad row stores nothing and names the row.
func TestProductionBatch(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	if _, err := s.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	rows := make([]db.ProductionRecordData, 500)
	for i := range rows {
		rows[i] = productionRow(p.ID, fmt.Sprintf("W-%03d", i), 200)
	}
	rows[123].CurrentA = 230
	recs, err := s.CreateProductionRecords(ctx, a, rows)
	if err != nil || len(recs) != 500 || len(recs[123].Flags) != 1 || len(recs[0].Flags) != 0 {
		t.Fatalf("CreateProductionRecords(500) = %d records, %v; want 500 with row 123 flagged", len(recs), err)
	}
	flagged, err := s.ProductionRecords(ctx, site, db.ProductionRecordFilter{FlaggedOnly: true}, "", 0)
	if err != nil || len(flagged.Items) != 1 || flagged.Items[0].WeldID != "W-123" {
		t.Fatalf("flagged production records = %+v, %v; want W-123 only", flagged.Items, err)
	}

	bad := rows[:50]
	bad[17].ProcedureID = uuid.New()
	var fe *db.FieldError
	if _, err := s.CreateProductionRecords(ctx, a, bad); !errors.As(err, &fe) || fe.Field != "records[17].procedure_id" {
		t.Fatalf("batch with an unknown procedure at row 17: error = %v, want records[17].procedure_id", err)
	}
	all, err := s.ProductionRecords(ctx, site, db.ProductionRecordFilter{}, "", db.MaxPageSize)
	if err != nil {
		t.Fatal(err)
	}
	rest, err := s.ProductionRecords(ctx, site, db.ProductionRecordFilter{}, all.Next, db.MaxPageSize)
	if err != nil || len(all.Items) != 500 || len(rest.Items) != 0 {
		t.Fatalf("after the refused batch: %d records on the first page and %d after it, %v; want the 500 of the good batch only", len(all.Items), len(rest.Items), err)
	}
}

// TestProcedureWritesKeepFlags: correcting a procedure re-evaluates its
// records' flags (unchanged here: the ranges did not change) and voiding it
// removes them, in the writing transaction.
func TestProcedureWritesKeepFlags(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	if _, err := s.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	if _, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, "P-"+p.Code, 231, 24)); err != nil {
		t.Fatal(err)
	}
	before := procedureFlags(t, s, site, p.ID)
	if len(before) != 1 {
		t.Fatalf("coupon at 231 A: %d flags, want 1", len(before))
	}
	fixed := p.ProcedureData
	fixed.Title += " (title corrected)"
	if _, err := s.CorrectProcedure(ctx, a, p.ID, db.Change{BaseRevision: 1, Reason: "typo in title"}, fixed); err != nil {
		t.Fatal(err)
	}
	after := procedureFlags(t, s, site, p.ID)
	if len(after) != 1 || after[0].Variable != before[0].Variable || *after[0].Excess != *before[0].Excess {
		t.Errorf("after a title correction: %+v, want the same flag as before %+v", after, before)
	}
	pr, err := s.ProcedureRanges(ctx, site, p.ID, 0)
	if err != nil || !pr.DerivedFromOlderRevision || pr.ProcedureRevision != 1 || pr.CurrentProcedureRevision != 2 {
		t.Errorf("ranges after the correction: from revision %d, current %d, older %v (err %v); want 1, 2, true",
			pr.ProcedureRevision, pr.CurrentProcedureRevision, pr.DerivedFromOlderRevision, err)
	}
	if _, err := s.VoidProcedure(ctx, a, p.ID, db.Change{BaseRevision: 2, Reason: "entered twice"}); err != nil {
		t.Fatal(err)
	}
	if got := procedureFlags(t, s, site, p.ID); len(got) != 0 {
		t.Errorf("after voiding the procedure: %d flags, want 0", len(got))
	}
}
