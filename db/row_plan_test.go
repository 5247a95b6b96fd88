package db_test

import (
	"context"
	"reflect"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestCollectTailMatchesByName reads every list that scans its rows by
// position (procedures and PQRs with their sign-offs, sections, production
// records, sign-offs, calibrations, flags, audit events) once that way and once by
// pgx's own scan by name (pgx.RowToStructByName), over stored rows with and
// without their optional values (a signed and an unsigned revision, a
// voided one, sections with and without fillet sizes), and wants the same
// pages. pgx is the reference: the position scan must decode each value
// exactly as it does.
func TestCollectTailMatchesByName(t *testing.T) {
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	eng := actor(site)
	p := mustProcedure(t, s, site)
	other, err := s.CreateProcedure(ctx, eng, procedureData("WPS-SCAN-2"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.VoidProcedure(ctx, eng, other.ID, db.Change{BaseRevision: 1, Reason: "entered twice"}); err != nil {
		t.Fatal(err)
	}
	q, err := s.CreateQualificationRecord(ctx, eng, rangesPQRData("PQR-SCAN-1"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.CreateQualificationRecord(ctx, eng, rangesPQRData("PQR-SCAN-2")); err != nil {
		t.Fatal(err)
	}
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	for kind, id := range map[string]uuid.UUID{db.SignProcedure: p.ID, db.SignQualificationRecord: q.ID} {
		if _, err := s.SignOffRecord(ctx, eng, kind, id, db.SignOffRequest{Revision: 1, Statement: "Reviewed."}); err != nil {
			t.Fatal(err)
		}
	}
	storeFitCoupons(t, s, site, p.ID, 6)
	rp := rangesProcedure(t, s, eng) // its ranges flag J-2's current
	if _, err := s.DeriveRanges(ctx, eng, rp.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	if _, err := s.CreateProductionRecords(ctx, eng, []db.ProductionRecordData{productionRow(rp.ID, "J-1", 180), productionRow(rp.ID, "J-2", 400)}); err != nil {
		t.Fatal(err)
	}
	if _, err := s.CreateCalibration(ctx, eng, spec(db.CalibrationJacksonFixed)); err != nil {
		t.Fatal(err)
	}
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	lists := map[string]func() (any, int, error){
		"procedures": func() (any, int, error) {
			return counted(s.Procedures(ctx, site, db.ProcedureFilter{IncludeVoided: true}, "", 0))
		},
		"qualification records": func() (any, int, error) {
			return counted(s.QualificationRecords(ctx, site, db.QualificationRecordFilter{}, "", 0))
		},
		"sections": func() (any, int, error) { return counted(s.Measurements(ctx, site, db.MeasurementFilter{}, "", 0)) },
		"production records": func() (any, int, error) {
			return counted(s.ProductionRecords(ctx, site, db.ProductionRecordFilter{}, "", 0))
		},
		"sign-offs":    func() (any, int, error) { return counted(s.SignOffs(ctx, site, db.SignOffFilter{}, "", 0)) },
		"calibrations": func() (any, int, error) { return counted(s.Calibrations(ctx, site, db.CalibrationFilter{}, "", 0)) },
		"flags":        func() (any, int, error) { return counted(s.Flags(ctx, site, db.FlagFilter{}, "", 0)) },
		"audit events": func() (any, int, error) { return counted(s.AuditEvents(ctx, site, db.AuditFilter{}, "", 0)) },
	}
	defer db.ScanByName(false)
	for name, list := range lists {
		db.ScanByName(false)
		before := db.PositionRows()
		byPosition, n, err := list()
		if err != nil || n == 0 {
			t.Fatalf("%s by position: %d items, %v", name, n, err)
		}
		if scanned := db.PositionRows() - before; scanned < int64(n) {
			t.Errorf("%s: %d of %d rows scanned by position, want all", name, scanned, n)
		}
		db.ScanByName(true)
		byName, _, err := list()
		if err != nil {
			t.Fatalf("%s by name: %v", name, err)
		}
		if !reflect.DeepEqual(byPosition, byName) {
			t.Errorf("%s: by position\n%+v\nby name\n%+v", name, byPosition, byName)
		}
	}
}

// counted is a page with its number of items.
func counted[T any](p db.Page[T], err error) (any, int, error) { return p, len(p.Items), err }
