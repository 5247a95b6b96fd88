package db_test

import (
	"context"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
)

// followPages reads a list from the empty cursor on, each page asked for
// with the cursor the one before it returned, until a page comes back empty
// or maxPages pages were read, and returns key of every item in the order
// the pages gave them.
func followPages[T, K any](t *testing.T, maxPages int, page func(cursor string) (db.Page[T], error), key func(T) K) []K {
	t.Helper()
	var got []K
	cursor := ""
	for range maxPages {
		pg, err := page(cursor)
		if err != nil {
			t.Fatal(err)
		}
		for _, it := range pg.Items {
			got = append(got, key(it))
		}
		if len(pg.Items) == 0 {
			break
		}
		cursor = pg.Next
	}
	return got
}

// checkRecheck checks that recheck finds a list key table equal to its
// derivation at site, then deletes the row of id from the table behind the
// service's back (as the database's superuser) and checks that recheck
// names exactly that one difference.
func checkRecheck(t *testing.T, recheck func(context.Context, string) ([]string, error), site, table string, id uuid.UUID) {
	t.Helper()
	ctx := context.Background()
	if diffs, err := recheck(ctx, site); err != nil || len(diffs) != 0 {
		t.Errorf("recheck of %s = %v, %v; want no difference", table, diffs, err)
	}
	if _, err := superuser(t).Exec(ctx, `DELETE FROM `+table+` WHERE site = $1 AND id = $2`, site, id); err != nil {
		t.Fatal(err)
	}
	if diffs, err := recheck(ctx, site); err != nil || len(diffs) != 1 {
		t.Errorf("recheck of %s after deleting a row = %v, %v; want that row named", table, diffs, err)
	}
}
