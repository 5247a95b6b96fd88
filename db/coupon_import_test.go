package db_test

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestImportLeavesVerify: an import encodes each coupon's and section's leaf
// from the values it copies instead of reading the rows back, so the
// verifier, which encodes every leaf again from the stored row, is the
// check that both agree. The coupons cover every column type an import
// writes: NULLs and given optional values, a day before 2000-01-01 (the
// origin of PostgreSQL's binary dates) and before 1970-01-01, numbers whose
// shortest text needs 16 or 17 digits, negative numbers and zero, text with
// letters outside ASCII, spaces at either end, tab and line break. Editing
// an imported row afterwards is then found like any other edit.
func TestImportLeavesVerify(t *testing.T) {
	// Not parallel: the tampering at the end disables a trigger (ALTER
	// TABLE, a table-wide lock).
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := mustProcedure(t, s, site)
	pqr, err := s.CreateQualificationRecord(ctx, a, rangesPQRData("PQR-"+uuid.NewString()[:8]))
	if err != nil {
		t.Fatal(err)
	}
	full := couponData(p.ID, "IMP-FULL")
	full.QualificationRecordID = &pqr.ID
	// 6 + 2^-50, the next binary64 after 6: its shortest round-trip text has
	// 16 significant digits (IEEE 754 binary64 spacing at 6 is 2^-50).
	full.ThicknessMM = math.Nextafter(6, 7)
	full.TravelSpeedMMPerS = 5 + 1.0/3 // 5.333333333333333 in binary64 (IEEE 754): no short decimal holds it
	full.PreheatC, full.InterpassC = ptr(-12.5), ptr(0.0)
	full.WelderID, full.FillerLot = "Søren Ø-7", "  L 22/31 "
	sparse := couponData(p.ID, "IMP-SPARSE")
	sparse.WireFeedSpeedMPerMin, sparse.CTWDMM, sparse.WireDiameterMM, sparse.Polarity, sparse.PreheatC = nil, nil, nil, nil, nil
	sparse.PowerSourceID, sparse.FillerLot, sparse.ShieldingGas = "", "", ""
	sparse.WeldedOn = db.DateOf(time.Date(1969, 12, 31, 0, 0, 0, 0, time.UTC)) // before both origins
	onlyPQR := couponData(p.ID, "IMP-PQR")
	onlyPQR.ProcedureID, onlyPQR.QualificationRecordID = nil, &pqr.ID
	onlyPQR.WeldedOn = db.DateOf(time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC)) // day 0 of PostgreSQL's binary dates
	sec := func(label string, pen, reinf float64, remark string) db.ImportSection {
		m := measurementData(uuid.Nil, label, "accept")
		m.PenetrationMM, m.ReinforcementMM, m.Remark = pen, reinf, remark
		m.Leg2MM, m.FusedAreaMM2 = nil, ptr(12.25)
		return db.ImportSection{Data: m}
	}
	cs := []db.ImportCoupon{
		{Row: 2, Data: full, Sections: []db.ImportSection{sec("A", 1.8, -1.25, "tab\there, line\nbreak"), sec(" b ", 0, 0, "Naht gut — ø")}},
		{Row: 4, Data: sparse},
		{Row: 5, Data: onlyPQR, Sections: []db.ImportSection{sec("A", 2.0000000000000004, 1e-05, "")}},
	}
	res, err := s.ImportCoupons(ctx, a, cs, true)
	if err != nil {
		t.Fatal(err)
	}
	if res.Created != 3 || res.Sections != 3 || len(res.Issues) != 0 {
		t.Fatalf("import = %+v, want 3 coupons and 3 sections written", res)
	}
	mustLogged(t, s, site)
	cp, err := s.Checkpoint(ctx, site, 0)
	if err != nil {
		t.Fatal(err)
	}
	// The verifier encodes each stored row again (README, "The record log")
	// and hashes it as an RFC 9162 leaf: every imported leaf must match.
	if v, err := s.VerifyLog(ctx, site, []byte(cp.Note)); err != nil || !v.OK {
		t.Fatalf("VerifyLog after the import = %+v (err %v), want ok", v, err)
	}
	if rep := offlineVerify(t, s, site, cp.Note); !rep.OK {
		t.Fatalf("offline verify after the import: %q", rep.Problems)
	}
	// The coupons list's key holds the imported coupons as derived: the
	// sequencer wrote new coupons straight from their revisions, and those
	// whose sections it logged in the same pass through the derivation.
	if diffs, err := s.RecheckCouponList(ctx, site); err != nil || len(diffs) > 0 {
		t.Fatalf("coupon_list after the import: %q (err %v), want its derivation", diffs, err)
	}
	accepted, err := s.Coupons(ctx, site, db.CouponFilter{Acceptance: "accept"}, "", 0)
	if err != nil || len(accepted.Items) != 2 {
		t.Errorf("coupons with accepted sections after the import: %d (err %v), want IMP-FULL and IMP-PQR", len(accepted.Items), err)
	}

	// An imported section edited afterwards no longer matches its leaf.
	conn := superuser(t)
	var id uuid.UUID
	if err := conn.QueryRow(ctx, `SELECT m.id FROM measurements m JOIN coupons c ON c.site = m.site AND c.id = m.coupon_id
		WHERE c.site = $1 AND c.coupon_mark = 'IMP-PQR'`, site).Scan(&id); err != nil {
		t.Fatal(err)
	}
	run(t, conn, "ALTER TABLE measurements DISABLE TRIGGER measurements_append_only",
		fmt.Sprintf("UPDATE measurements SET penetration_mm = 2 WHERE site = '%s' AND id = '%s'", site, id),
		"ALTER TABLE measurements ENABLE TRIGGER measurements_append_only")
	v, err := s.VerifyLog(ctx, site, []byte(cp.Note))
	if err != nil {
		t.Fatal(err)
	}
	want := fmt.Sprintf("(measurement %s revision 1): the stored fact does not match its leaf hash", id)
	if v.OK || !strings.Contains(strings.Join(v.Problems, "\n"), want) {
		t.Errorf("VerifyLog after editing an imported section: ok %v, problems %q; want %q", v.OK, v.Problems, want)
	}
}

// TestImportMarkTakenMeanwhile: a mark another write claims after the
// import's plan read the marks, and commits while the import waits for it,
// fails the import's claim (its INSERT into current_marks) on the primary
// key: the import is rolled back whole (nothing of it stored) and the mark
// is named as a conflict.
func TestImportMarkTakenMeanwhile(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := mustProcedure(t, s, site)
	mark := "RACE-" + uuid.NewString()[:8]
	other := superuser(t)
	tx, err := other.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback(ctx) //nolint:errcheck // committed below
	if _, err := tx.Exec(ctx, `INSERT INTO current_marks (site, kind, mark, record_id) VALUES ($1, 'coupon_mark', $2, $3)`,
		site, mark, uuid.New()); err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() {
		_, err := s.ImportCoupons(ctx, a, []db.ImportCoupon{
			{Row: 2, Data: couponData(p.ID, "FREE-"+mark)},
			{Row: 3, Data: couponData(p.ID, mark), Sections: []db.ImportSection{{Row: 3, Data: measurementData(uuid.Nil, "A", "accept")}}},
		}, true)
		done <- err
	}()
	// Wait until the import's claim waits for the uncommitted mark, then commit it.
	watch, waiting := superuser(t), false
	for deadline := time.Now().Add(20 * time.Second); !waiting && time.Now().Before(deadline); time.Sleep(20 * time.Millisecond) {
		if err := watch.QueryRow(ctx, `SELECT count(*) > 0 FROM pg_stat_activity
			WHERE wait_event_type = 'Lock' AND query LIKE 'INSERT INTO current_marks%'`).Scan(&waiting); err != nil {
			t.Fatal(err)
		}
	}
	if !waiting {
		t.Fatal("the import's claim never waited for the other write's mark")
	}
	if err := tx.Commit(ctx); err != nil {
		t.Fatal(err)
	}
	err = <-done
	if !errors.Is(err, db.ErrConflict) || !strings.Contains(err.Error(), fmt.Sprintf("another write took the mark %q during the import", mark)) {
		t.Fatalf("import = %v, want a conflict naming the mark %s", err, mark)
	}
	var n int
	if err := other.QueryRow(ctx, `SELECT count(*) FROM coupons WHERE site = $1`, site).Scan(&n); err != nil || n != 0 {
		t.Errorf("%d coupons stored (%v), want none: the import is one transaction", n, err)
	}
}
