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

// listedProcedure is what the brute-force oracle below knows of one procedure.
type listedProcedure struct {
	id                    uuid.UUID
	code, process, status string
	voided                bool
}

func (p *listedProcedure) data() db.ProcedureData {
	d := procedureData(p.code)
	d.Process, d.Status = p.process, p.status
	return d
}

// TestProcedureListIsDerived writes procedures over two processes and three
// statuses, with corrections (of the status and the process) and a void,
// then checks every procedures list filter, alone and combined, paged two
// at a time, against a brute-force filter of what was written, and that
// procedure_list equals its derivation from the records and the log; a row
// deleted behind the service's back shows in the recheck. The expectation
// is the list's own definition (the current revision of each procedure, in
// log order), not reference data.
func TestProcedureListIsDerived(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	var all []*listedProcedure // in log order of each procedure's current revision
	for i := range 12 {
		p := &listedProcedure{code: fmt.Sprintf("PL-%02d", i), process: []string{"GMAW", "FCAW"}[i%2],
			status: []string{"draft", "qualified", "superseded"}[i%3]}
		r, err := s.CreateProcedure(ctx, a, p.data())
		if err != nil {
			t.Fatal(err)
		}
		p.id = r.ID
		all = append(all, p)
	}
	moveToEnd := func(code string) *listedProcedure {
		i := slices.IndexFunc(all, func(p *listedProcedure) bool { return p.code == code })
		moved := all[i]
		all = append(slices.Delete(all, i, i+1), moved)
		return moved
	}
	for _, c := range []struct{ code, process, status string }{
		{"PL-00", "GMAW", "qualified"}, {"PL-04", "GMAW", "superseded"}, {"PL-07", "GMAW", "qualified"},
	} {
		p := moveToEnd(c.code)
		p.process, p.status = c.process, c.status
		if _, err := s.CorrectProcedure(ctx, a, p.id, db.Change{BaseRevision: 1, Reason: "retyped"}, p.data()); err != nil {
			t.Fatal(err)
		}
	}
	p := moveToEnd("PL-09")
	if _, err := s.VoidProcedure(ctx, a, p.id, db.Change{BaseRevision: 1, Reason: "entered twice"}); err != nil {
		t.Fatal(err)
	}
	p.voided = true

	for _, tc := range []struct {
		name string
		f    db.ProcedureFilter
	}{
		{"none", db.ProcedureFilter{}},
		{"include_voided", db.ProcedureFilter{IncludeVoided: true}},
		{"process", db.ProcedureFilter{Process: "FCAW"}},
		{"status", db.ProcedureFilter{Status: "qualified"}},
		{"process+status", db.ProcedureFilter{Process: "GMAW", Status: "superseded"}},
		{"process+include_voided", db.ProcedureFilter{Process: "FCAW", IncludeVoided: true}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			f := tc.f
			var want []string
			for _, p := range all {
				if (p.voided && !f.IncludeVoided) || (f.Process != "" && p.process != f.Process) || (f.Status != "" && p.status != f.Status) {
					continue
				}
				want = append(want, p.code)
			}
			got := followPages(t, 20, func(cursor string) (db.Page[db.Procedure], error) {
				return s.Procedures(ctx, site, f, cursor, 2)
			}, func(p db.Procedure) string { return p.Code })
			if !slices.Equal(got, want) {
				t.Errorf("Procedures(%s) in pages of 2 = %v, want %v (log order)", tc.name, got, want)
			}
		})
	}

	checkRecheck(t, s.RecheckProcedureList, site, "procedure_list", all[0].id)
}

// TestProcedurePagerSeesEveryRowOnce follows the procedures list filtered
// to FCAW while 16 writers add 2,400 procedures, every fourth FCAW: the
// follower must see every committed FCAW procedure exactly once and no
// other (the list's key, procedure_list, is written in the transaction that
// gives a leaf its index).
func TestProcedurePagerSeesEveryRowOnce(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("2,400 writes")
	}
	s, site := dbtest.Store(t), dbtest.Site(t)
	ctx := context.Background()
	followEveryRowOnce(t, s, site, "procedure", func(w, i int) (uuid.UUID, bool, error) {
		p := &listedProcedure{code: fmt.Sprintf("PPG-%02d-%03d", w, i), process: "GMAW", status: "draft"}
		if i%4 == 0 {
			p.process = "FCAW"
		}
		r, err := s.CreateProcedure(ctx, actor(site), p.data())
		return r.ID, p.process == "FCAW", err
	}, func(cursor string) (db.Page[db.Procedure], error) {
		return s.Procedures(ctx, site, db.ProcedureFilter{Process: "FCAW"}, cursor, 50)
	}, func(p db.Procedure) uuid.UUID { return p.ID })
}
