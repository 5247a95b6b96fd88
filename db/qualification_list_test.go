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

// listedPQR is what the brute-force oracle below knows of one PQR.
type listedPQR struct {
	id                      uuid.UUID
	number, process, welder string
	outcome                 string
	welded                  db.Date
	voided                  bool
}

// pqrListData is PQR number as rangesPQRData states it, with the columns
// the list filters on set.
func pqrListData(q *listedPQR) db.QualificationRecordData {
	d := rangesPQRData(q.number)
	d.Process, d.WelderID, d.Outcome, d.WeldedOn = q.process, q.welder, q.outcome, q.welded
	if q.outcome == "fail" {
		d.BendResult = "fail"
	}
	return d
}

// TestQualificationListIsDerived writes PQRs over several processes,
// welders, outcomes and welding days (two months apart, so a long range
// walks days and months), with corrections (of the outcome, the welder and
// the welding day) and a void, then checks every PQRs list filter, alone
// and combined, paged two at a time, against a brute-force filter of what
// was written, and that qualification_list equals its derivation from the
// records and the log; a row deleted behind the service's back shows in the
// recheck. The expectation is the list's own definition (the current
// revision of each PQR, in log order), not reference data.
func TestQualificationListIsDerived(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	day0 := time.Date(2025, 1, 20, 0, 0, 0, 0, time.UTC)
	var all []*listedPQR // in log order of each PQR's current revision
	for i := range 14 {
		q := &listedPQR{number: fmt.Sprintf("QL-%02d", i), process: []string{"GMAW", "FCAW"}[i%2],
			welder: fmt.Sprintf("W-%d", i%3), outcome: "pass", welded: db.DateOf(day0.AddDate(0, 0, 5*i))}
		if i%4 == 1 {
			q.outcome = "fail"
		}
		r, err := s.CreateQualificationRecord(ctx, a, pqrListData(q))
		if err != nil {
			t.Fatal(err)
		}
		q.id = r.ID
		all = append(all, q)
	}
	// moveToEnd records a new revision of a PQR: it leaves its place and is
	// listed again at the end of the log.
	moveToEnd := func(number string) *listedPQR {
		i := slices.IndexFunc(all, func(q *listedPQR) bool { return q.number == number })
		moved := all[i]
		all = append(slices.Delete(all, i, i+1), moved)
		return moved
	}
	for _, c := range []struct {
		number, outcome, welder string
		days                    int
	}{{"QL-01", "pass", "W-1", 0}, {"QL-02", "fail", "W-2", 0}, {"QL-06", "pass", "W-0", 40}, {"QL-10", "pass", "W-9", -30}} {
		q := moveToEnd(c.number)
		q.outcome, q.welder, q.welded = c.outcome, c.welder, db.DateOf(q.welded.AddDate(0, 0, c.days))
		if _, err := s.CorrectQualificationRecord(ctx, a, q.id, db.Change{BaseRevision: 1, Reason: "retyped"}, pqrListData(q)); err != nil {
			t.Fatal(err)
		}
	}
	q := moveToEnd("QL-05")
	if _, err := s.VoidQualificationRecord(ctx, a, q.id, db.Change{BaseRevision: 1, Reason: "entered twice"}); err != nil {
		t.Fatal(err)
	}
	q.voided = true

	d := func(days int) *db.Date { x := db.DateOf(day0.AddDate(0, 0, days)); return &x }
	for _, tc := range []struct {
		name string
		f    db.QualificationRecordFilter
	}{
		{"none", db.QualificationRecordFilter{}},
		{"include_voided", db.QualificationRecordFilter{IncludeVoided: true}},
		{"process", db.QualificationRecordFilter{Process: "FCAW"}},
		{"outcome", db.QualificationRecordFilter{Outcome: "fail"}},
		{"welder_id", db.QualificationRecordFilter{WelderID: "W-2"}},
		{"corrected-to welder", db.QualificationRecordFilter{WelderID: "W-9"}},
		{"welded_from+to(days)", db.QualificationRecordFilter{WeldedFrom: d(10), WeldedTo: d(31)}},
		{"welded_from+to(months)", db.QualificationRecordFilter{WeldedFrom: d(3), WeldedTo: d(66)}},
		{"welded_from", db.QualificationRecordFilter{WeldedFrom: d(30)}},
		{"welded_to", db.QualificationRecordFilter{WeldedTo: d(30)}},
		{"process+outcome", db.QualificationRecordFilter{Process: "GMAW", Outcome: "fail"}},
		{"welder_id+welded_from", db.QualificationRecordFilter{WelderID: "W-0", WeldedFrom: d(20)}},
		{"process+welded_from+to", db.QualificationRecordFilter{Process: "FCAW", WeldedFrom: d(3), WeldedTo: d(66)}},
		{"welded_from+include_voided", db.QualificationRecordFilter{WeldedFrom: d(12), IncludeVoided: true}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			f := tc.f
			var want []string
			for _, q := range all {
				if (q.voided && !f.IncludeVoided) || (f.Process != "" && q.process != f.Process) ||
					(f.Outcome != "" && q.outcome != f.Outcome) || (f.WelderID != "" && q.welder != f.WelderID) ||
					(f.WeldedFrom != nil && q.welded.Before(f.WeldedFrom.Time)) || (f.WeldedTo != nil && !q.welded.Before(f.WeldedTo.Time)) {
					continue
				}
				want = append(want, q.number)
			}
			got := followPages(t, 20, func(cursor string) (db.Page[db.QualificationRecord], error) {
				return s.QualificationRecords(ctx, site, f, cursor, 2)
			}, func(q db.QualificationRecord) string { return q.RecordNumber })
			if !slices.Equal(got, want) {
				t.Errorf("QualificationRecords(%s) in pages of 2 = %v, want %v (log order)", tc.name, got, want)
			}
		})
	}

	checkRecheck(t, s.RecheckQualificationList, site, "qualification_list", all[0].id)
}

// TestQualificationPagerSeesEveryRowOnce follows the PQRs list filtered to
// failed PQRs while 16 writers add 2,400 PQRs, every fourth failed: the
// follower must see every committed failed PQR exactly once and no passed
// one (the list's key, qualification_list, is written in the transaction
// that gives a leaf its index).
func TestQualificationPagerSeesEveryRowOnce(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("2,400 writes")
	}
	s, site := dbtest.Store(t), dbtest.Site(t)
	ctx := context.Background()
	day := db.DateOf(time.Date(2025, 3, 3, 0, 0, 0, 0, time.UTC))
	followEveryRowOnce(t, s, site, "qualification_record", func(w, i int) (uuid.UUID, bool, error) {
		q := &listedPQR{number: fmt.Sprintf("QPG-%02d-%03d", w, i), process: "GMAW", welder: "W-11", outcome: "pass", welded: day}
		if i%4 == 0 {
			q.outcome = "fail"
		}
		r, err := s.CreateQualificationRecord(ctx, actor(site), pqrListData(q))
		return r.ID, q.outcome == "fail", err
	}, func(cursor string) (db.Page[db.QualificationRecord], error) {
		return s.QualificationRecords(ctx, site, db.QualificationRecordFilter{Outcome: "fail"}, cursor, 50)
	}, func(q db.QualificationRecord) uuid.UUID { return q.ID })
}
