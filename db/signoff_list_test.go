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

// TestSignOffListIsDerived signs procedures and qualification records by
// two engineers, the kinds interleaved, then checks every sign-offs list
// filter, alone and combined, paged two at a time, against a brute-force
// filter of the sign-offs in the order they were made (the log's order:
// each commits before the next), and that sign_off_list equals its
// derivation from the sign-offs and the log; a row deleted behind the
// service's back shows in the recheck. The expectation is the list's own
// definition, not reference data.
func TestSignOffListIsDerived(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	ctx := context.Background()
	type signed struct {
		id, record uuid.UUID
		kind, by   string
	}
	var all []signed
	for i := range 6 {
		by := db.Actor{Site: site, Name: fmt.Sprintf("E%d", 1+i%2), Role: db.RoleEngineer}
		var kind string
		var record uuid.UUID
		if i%3 == 1 {
			kind, record = db.SignProcedure, mustProcedure(t, s, site).ID
		} else {
			q, err := s.CreateQualificationRecord(ctx, by, rangesPQRData(fmt.Sprintf("PQR-SL-%d", i)))
			if err != nil {
				t.Fatal(err)
			}
			kind, record = db.SignQualificationRecord, q.ID
		}
		so, err := s.SignOffRecord(ctx, by, kind, record, db.SignOffRequest{Revision: 1, Statement: "Reviewed."})
		if err != nil {
			t.Fatal(err)
		}
		all = append(all, signed{so.ID, record, kind, by.Name})
	}
	second := all[3].record
	for _, tc := range []struct {
		name string
		f    db.SignOffFilter
		keep func(signed) bool
	}{
		{"none", db.SignOffFilter{}, func(signed) bool { return true }},
		{"record_kind", db.SignOffFilter{RecordKind: db.SignProcedure}, func(x signed) bool { return x.kind == db.SignProcedure }},
		{"signed_by", db.SignOffFilter{SignedBy: "E2"}, func(x signed) bool { return x.by == "E2" }},
		{"record_id", db.SignOffFilter{RecordID: &second}, func(x signed) bool { return x.record == second }},
		{"record_kind+signed_by", db.SignOffFilter{RecordKind: db.SignQualificationRecord, SignedBy: "E1"},
			func(x signed) bool { return x.kind == db.SignQualificationRecord && x.by == "E1" }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var want []uuid.UUID
			for _, x := range all {
				if tc.keep(x) {
					want = append(want, x.id)
				}
			}
			if len(want) == 0 || len(want) == len(all) && tc.name != "none" {
				t.Fatalf("the filter keeps %d of %d sign-offs: the case checks nothing", len(want), len(all))
			}
			got := followPages(t, 10, func(cursor string) (db.Page[db.SignOff], error) {
				return s.SignOffs(ctx, site, tc.f, cursor, 2)
			}, func(x db.SignOff) uuid.UUID { return x.ID })
			if !slices.Equal(got, want) {
				t.Errorf("SignOffs(%s) in pages of 2 = %v, want %v (log order)", tc.name, got, want)
			}
		})
	}
	checkRecheck(t, s.RecheckSignOffList, site, "sign_off_list", all[2].id)
}
