package db_test

import (
	"context"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestCalibrationListFollowsTheLog pages the calibration list one item at a
// time: each calibration appears exactly once in the order it was logged,
// every page (the last and an empty one included) returns a cursor, and a
// calibration fitted after the end is found by following that cursor. The
// sign-off list pages the same way.
func TestCalibrationListFollowsTheLog(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	storeFitCoupons(t, s, site, p.ID, 6)
	var want []uuid.UUID
	for _, m := range []db.CalibrationModel{db.CalibrationJacksonFixed, db.CalibrationJacksonFree, db.CalibrationJacksonFixed} {
		c, err := s.CreateCalibration(ctx, actor(site), spec(m))
		if err != nil {
			t.Fatal(err)
		}
		want = append(want, c.ID)
	}
	follow := func(cursor string) ([]uuid.UUID, string) {
		t.Helper()
		var got []uuid.UUID
		for range 10 {
			page, err := s.Calibrations(ctx, site, db.CalibrationFilter{}, cursor, 1)
			if err != nil {
				t.Fatal(err)
			}
			if page.Next == "" {
				t.Fatalf("page after %q has no cursor; every page must return one", cursor)
			}
			if len(page.Items) == 0 {
				if page.Next != cursor {
					t.Errorf("empty page answered cursor %q, want the one it was asked with %q", page.Next, cursor)
				}
				return got, cursor
			}
			got = append(got, page.Items[0].ID)
			cursor = page.Next
		}
		t.Fatal("the pager did not reach an empty page in 10 steps")
		return nil, ""
	}
	got, end := follow("")
	if len(got) != len(want) {
		t.Fatalf("followed %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("item %d = %s, want %s (log order)", i, got[i], want[i])
		}
	}
	later, err := s.CreateCalibration(ctx, actor(site), spec(db.CalibrationJacksonFree))
	if err != nil {
		t.Fatal(err)
	}
	if more, _ := follow(end); len(more) != 1 || more[0] != later.ID {
		t.Errorf("following the last cursor found %v, want only the new calibration %s", more, later.ID)
	}
	// Sign the calibrations newest first: the sign-off list follows the
	// order of signing, not of the calibrations' ids.
	var signed []uuid.UUID
	for i := len(want) - 1; i >= 0; i-- {
		so, err := s.SignOffRecord(ctx, actor(site), db.SignCalibration, want[i], db.SignOffRequest{Revision: 1, Statement: "fit reviewed"})
		if err != nil {
			t.Fatal(err)
		}
		signed = append(signed, so.ID)
	}
	cursor := ""
	var listed []uuid.UUID
	for range 10 {
		page, err := s.SignOffs(ctx, site, db.SignOffFilter{}, cursor, 1)
		if err != nil || page.Next == "" {
			t.Fatalf("sign-offs after %q: %d items, cursor %q, err %v; every page must return a cursor", cursor, len(page.Items), page.Next, err)
		}
		if len(page.Items) == 0 {
			break
		}
		listed = append(listed, page.Items[0].ID)
		cursor = page.Next
	}
	if len(listed) != len(signed) {
		t.Fatalf("sign-offs listed %v, want %v", listed, signed)
	}
	for i := range signed {
		if listed[i] != signed[i] {
			t.Errorf("sign-off %d = %s, want %s (log order)", i, listed[i], signed[i])
		}
	}
}
