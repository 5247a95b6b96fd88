package db_test

import (
	"context"
	"fmt"
	"slices"
	"testing"
	"time"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestProductionListIsDerived writes production records in chunks and
// batches (two procedures, three welders, times over a year and a half and
// inside days, a current the first procedure's ranges flag), then checks
// every production records list filter, alone and combined, paged three at a
// time, against a brute-force filter of what was written in the order it
// was written (the log's order: each write commits before the next), and
// that production_list and production_list_pending equal their derivation
// from the records and the log, right after the writes and once logged; a row deleted behind the service's back
// shows in the recheck. The expectation is the list's own definition, not
// reference data.
func TestProductionListIsDerived(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	flagging, plain := rangesProcedure(t, s, a), rangesProcedure(t, s, a)
	if _, err := s.DeriveRanges(ctx, a, flagging.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	start := time.Date(2024, 9, 30, 22, 0, 0, 0, time.UTC)
	var all []db.ProductionRecordData // in log order
	for w := range 6 {
		var rows []db.ProductionRecordData
		for i := range 7 {
			n := w*7 + i
			proc, current := plain.ID, 200.0
			if n%3 == 0 {
				proc = flagging.ID
				if n%2 == 0 {
					current = 230 // outside the flagging procedure's ranges
				}
			}
			r := productionRow(proc, fmt.Sprintf("PL-%d", n), current)
			r.WelderID = fmt.Sprintf("W-%d", n%3)
			// Not in time order: every fifth record is a month late in the log.
			r.RecordedAt = start.Add(time.Duration(n*(n%5+1)) * 61 * time.Hour)
			rows = append(rows, r)
		}
		var err error
		if w%2 == 0 {
			_, err = s.ProductionChunk(ctx, a, rows, lineOf)
		} else {
			_, err = s.CreateProductionRecords(ctx, a, rows)
		}
		if err != nil {
			t.Fatal(err)
		}
		all = append(all, rows...)
	}
	// Whether or not the sequencer has taken the last writes yet: each
	// table is compared in one snapshot.
	if diffs, err := s.RecheckProductionList(ctx, site); err != nil || len(diffs) != 0 {
		t.Errorf("RecheckProductionList right after the writes = %v, %v; want no difference", diffs, err)
	}
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	flagged := func(r db.ProductionRecordData) bool { return r.CurrentA == 230 }
	at := func(days int, hours int) *time.Time {
		v := start.AddDate(0, 0, days).Add(time.Duration(hours) * time.Hour)
		return &v
	}
	fID := flagging.ID
	for _, tc := range []struct {
		name string
		f    db.ProductionRecordFilter
	}{
		{"none", db.ProductionRecordFilter{}},
		{"procedure_id", db.ProductionRecordFilter{ProcedureID: &fID}},
		{"welder_id", db.ProductionRecordFilter{WelderID: "W-1"}},
		{"weld_id", db.ProductionRecordFilter{WeldID: "PL-12"}},
		{"procedure_id+welder_id", db.ProductionRecordFilter{ProcedureID: &fID, WelderID: "W-0"}},
		{"flagged_only", db.ProductionRecordFilter{FlaggedOnly: true}},
		{"welder_id+flagged_only", db.ProductionRecordFilter{WelderID: "W-0", FlaggedOnly: true}},
		{"recorded_from+to(inside days)", db.ProductionRecordFilter{RecordedFrom: at(3, 5), RecordedTo: at(9, 7)}},
		{"recorded_from+to(months)", db.ProductionRecordFilter{RecordedFrom: at(20, 3), RecordedTo: at(200, 1)}},
		{"recorded_from", db.ProductionRecordFilter{RecordedFrom: at(61, 13)}},
		{"recorded_to", db.ProductionRecordFilter{RecordedTo: at(45, 2)}},
		{"recorded_from+to(months)+flagged_only", db.ProductionRecordFilter{RecordedFrom: at(1, 0), RecordedTo: at(300, 0), FlaggedOnly: true}},
		{"procedure_id+recorded_from", db.ProductionRecordFilter{ProcedureID: &fID, RecordedFrom: at(30, 0)}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			f := tc.f
			var want []string
			for _, r := range all {
				if (f.ProcedureID == nil || r.ProcedureID == *f.ProcedureID) && (f.WelderID == "" || r.WelderID == f.WelderID) &&
					(f.WeldID == "" || r.WeldID == f.WeldID) && (!f.FlaggedOnly || flagged(r)) &&
					(f.RecordedFrom == nil || !r.RecordedAt.Before(*f.RecordedFrom)) && (f.RecordedTo == nil || r.RecordedAt.Before(*f.RecordedTo)) {
					want = append(want, r.WeldID)
				}
			}
			if len(want) == 0 || len(want) == len(all) && tc.name != "none" {
				t.Fatalf("the filter keeps %d of %d records written: the case checks nothing", len(want), len(all))
			}
			got := followPages(t, 30, func(cursor string) (db.Page[db.ProductionRecord], error) {
				return s.ProductionRecords(ctx, site, f, cursor, 3)
			}, func(r db.ProductionRecord) string {
				if f.FlaggedOnly && len(r.Flags) == 0 {
					t.Errorf("%s listed as flagged without a flag", r.WeldID)
				}
				return r.WeldID
			})
			if !slices.Equal(got, want) {
				t.Errorf("ProductionRecords(%s) in pages of 3 = %v, want %v (log order)", tc.name, got, want)
			}
		})
	}

	if diffs, err := s.RecheckProductionList(ctx, site); err != nil || len(diffs) != 0 {
		t.Errorf("RecheckProductionList = %v, %v; want no difference", diffs, err)
	}
	conn := superuser(t)
	if _, err := conn.Exec(ctx, `DELETE FROM production_list WHERE site = $1 AND weld_id = 'PL-4'`, site); err != nil {
		t.Fatal(err)
	}
	if diffs, err := s.RecheckProductionList(ctx, site); err != nil || len(diffs) != 1 {
		t.Errorf("RecheckProductionList after deleting a row = %v, %v; want that record named", diffs, err)
	}
}
