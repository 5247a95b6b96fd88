package db_test

import (
	"bytes"
	"context"
	"fmt"
	"slices"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestFlagTimeRange follows the flags list of a time range page by page
// (short ranges walk each UTC day; longer ones, and ranges with a
// procedure, read the range whole) and checks it against the filter's
// definition computed here from every flag written: each flag whose subject
// time lies in [from, to), once, in the list's order (subject id as
// PostgreSQL orders uuids, bytewise; then variable, kind).
func TestFlagTimeRange(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	// 12 days of flags, a subject every 5 hours (so each day's subjects fall
	// at other hours), two variables, one in three a second kind.
	type flag struct {
		subject  uuid.UUID
		at       time.Time
		variable string
		kind     string
		proc     uuid.UUID
	}
	day0 := time.Date(2021, 3, 1, 0, 0, 0, 0, time.UTC)
	procs := []uuid.UUID{uuid.New(), uuid.New()}
	var all []flag
	for i := range 12 * 24 / 5 {
		subject, at := uuid.New(), day0.Add(time.Duration(i*5)*time.Hour)
		for _, v := range []string{"current_a", "voltage_v"} {
			all = append(all, flag{subject, at, v, "range", procs[i%2]})
			if i%3 == 0 {
				all = append(all, flag{subject, at, v, "model", procs[i%2]})
			}
		}
	}
	su := superuser(t)
	for _, f := range all {
		if _, err := su.Exec(ctx, `INSERT INTO flags (site, subject_kind, subject_id, subject_at, procedure_id, ranges_version, kind, variable, detail, computed_at)
			VALUES ($1, 'coupon', $2, $3, $4, 1, $5, $6, 'test', now())`, site, f.subject, f.at, f.proc, f.kind, f.variable); err != nil {
			t.Fatal(err)
		}
	}
	key := func(subject uuid.UUID, variable, kind string) string {
		return fmt.Sprintf("%x/%s/%s", subject[:], variable, kind)
	}
	at := func(day, hour int) *time.Time {
		v := day0.Add(time.Duration(day*24+hour) * time.Hour)
		return &v
	}
	for name, ff := range map[string]db.FlagFilter{
		"one day":                {From: at(2, 0), To: at(3, 0)},
		"partial ends":           {From: at(1, 7), To: at(4, 13)},
		"within one day":         {From: at(5, 3), To: at(5, 21)},
		"a week and a kind":      {From: at(3, 0), To: at(10, 0), Kind: "model"},
		"31 days":                {From: at(0, 1), To: at(31, 1)},
		"32 days":                {From: at(0, 1), To: at(32, 1)},
		"a week and a procedure": {From: at(3, 0), To: at(10, 0), ProcedureID: &procs[1]},
		"empty":                  {From: at(5, 3), To: at(5, 3)},
	} {
		var want []string
		for _, f := range all {
			if !f.at.Before(*ff.From) && f.at.Before(*ff.To) && (ff.Kind == "" || f.kind == ff.Kind) &&
				(ff.ProcedureID == nil || f.proc == *ff.ProcedureID) {
				want = append(want, key(f.subject, f.variable, f.kind))
			}
		}
		slices.SortFunc(want, func(a, b string) int { return bytes.Compare([]byte(a), []byte(b)) })
		var got []string
		for cursor, pages := "", 0; pages < 100; pages++ { // the last page has no cursor after it
			pg, err := s.Flags(ctx, site, ff, cursor, 7)
			if err != nil {
				t.Fatal(err)
			}
			for _, f := range pg.Items {
				got = append(got, key(f.SubjectID, f.Variable, f.Kind))
			}
			if cursor = pg.Next; cursor == "" {
				break
			}
		}
		if !slices.Equal(got, want) {
			t.Errorf("%s: %d flags %v, want %d %v", name, len(got), got, len(want), want)
		}
	}
}
