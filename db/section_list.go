package db

import (
	"context"
	"fmt"

	"github.com/jackc/pgx/v5"
)

// The sections list pages in log order through section_list (migration
// 000031): one row per logged section with its latest logged revision, that
// revision's log index and the columns the list filters on (coupon,
// acceptance, void mark), each filter with an index (site, <column>,
// leaf_index). The sequencer rewrites a section's row in the transaction
// that gives one of its leaves its index (queueSectionList), so the table
// agrees with the log a reader sees and a client following the cursor sees
// every section revision exactly once, as with the coupons list; a page of
// a verdict few sections have reads only that verdict's entries.

// sectionListColumns are section_list's columns, named.
const sectionListColumns = "site, id, revision, leaf_index, coupon_id, acceptance, voided"

// sectionListRefresh writes the section_list rows of sections $2 at site $1
// (an id may repeat): each section read from section_list_derived by its
// key, one seek per id. With the ids as a condition on the view, statistics
// taken while the site was small (as during an import) had the planner read
// every section of the site and filter.
var sectionListRefresh = keyRefresh("section_list", sectionListColumns)

// sectionListDelete removes the section_list rows of sections $2 at site
// $1: each found by its key, then deleted by its address.
var sectionListDelete = keyDelete("section_list")

// queueSectionList adds to the sequencer's batch of writes the rewrite of
// the section_list rows of the sections the batch logs (ids; a section may
// appear more than once); none, no statement.
func queueSectionList(b *pgx.Batch, site string, ids [][16]byte) {
	if len(ids) == 0 {
		return
	}
	queueKeyDelete(b, sectionListDelete, site, ids)
	b.Queue(sectionListRefresh, site, ids)
}

// listSections returns one page of current sections matching mf in log order
// after the cursor: the page's keys walked in log order through the filter's
// index of section_list (written into the statement with the page size, so
// the generic plan knows a page is small), then each row read by key.
func (s *Store) listSections(ctx context.Context, site string, mf MeasurementFilter, cursor string, limit int) (Page[Measurement], error) {
	return logPage(measurements.name, measurements.entity, cursor, limit, func(from int64, limit int) ([]Measurement, int64, error) {
		f := newFilter()
		f.args[0], f.args[1] = site, from
		if !mf.IncludeVoided {
			f.add("NOT k.voided")
		}
		if mf.CouponID != nil {
			f.add("k.coupon_id = ?", *mf.CouponID)
		}
		if mf.Acceptance != "" {
			f.add("k.acceptance = ?", mf.Acceptance)
		}
		sql := `SELECT ` + prefixed("m.", measurements.columns()) + `, k.leaf_index
		FROM (` + keyWalk("section_list", "k.id, k.revision, k.leaf_index", f.conds, pageLimit(limit)) + `) k
		` + revisionByKey(measurements, "m") + `
		ORDER BY k.leaf_index`
		return readIndexed[Measurement](ctx, s, site, listKinds{measurements.entity}, limit, sql, f.args)
	})
}

// RecheckSectionList compares the site's section_list with
// section_list_derived (the same rows computed from the sections and the
// log) and returns each difference; none means the list key is derived
// exactly.
func (s *Store) RecheckSectionList(ctx context.Context, site string) ([]string, error) {
	return s.recheckDerived(ctx, site, "section_list", "section_list_derived", sectionListColumns, "section")
}

// recheckDerived compares a list key table with the view it is derived from
// at site, row by row (keyed by id), and words each difference, naming the
// record as noun.
func (s *Store) recheckDerived(ctx context.Context, site, table, view, columns, noun string) ([]string, error) {
	rows, _ := s.pool.Query(ctx, `
		WITH want AS (SELECT `+columns+` FROM `+view+` WHERE site = $1),
		     have AS (SELECT `+columns+` FROM `+table+` WHERE site = $1)
		SELECT format('`+noun+` %s: %s', coalesce(w.id, h.id), CASE WHEN h.id IS NULL THEN 'not in `+table+`'
		              WHEN w.id IS NULL THEN 'in `+table+`, not logged' ELSE 'differs: ' || to_jsonb(h)::text END)
		FROM want w FULL JOIN have h ON h.id = w.id
		WHERE w IS DISTINCT FROM h
		ORDER BY 1`, site)
	diffs, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return nil, fmt.Errorf("db: recheck %s: %w", table, err)
	}
	return diffs, nil
}
