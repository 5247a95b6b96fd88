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
// calibration fitted after the end is found by following that cursor.
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
}
