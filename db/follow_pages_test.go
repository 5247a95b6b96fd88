package db_test

import (
	"testing"

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
