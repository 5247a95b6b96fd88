package db

import (
	"context"
	"fmt"
	"slices"
	"strconv"
	"strings"

	"github.com/jackc/pgx/v5"
)

// A list key table (coupon_list, section_list, production_list,
// sign_off_list, qualification_list, procedure_list) holds one row per
// logged record with its log index and the columns its list filters on.
// The sequencer writes it in the transaction that gives a leaf its index;
// a page walks it in log order through the filter's index.

// logPage reads one page of list in log order after cursor: limit clamped
// to 1..MaxPageSize, read (the page's items from log index from, and the
// last item's index) and the cursor to resume from. what names the list in
// errors.
func logPage[T any](list, what, cursor string, limit int, read func(from int64, limit int) ([]T, int64, error)) (Page[T], error) {
	if limit <= 0 || limit > MaxPageSize {
		limit = MaxPageSize
	}
	from, err := logCursor(list, cursor)
	if err != nil {
		return Page[T]{}, fmt.Errorf("db: list %s: %w", what, err)
	}
	items, last, err := read(from, limit)
	if err != nil {
		return Page[T]{}, fmt.Errorf("db: list %s: %w", what, mapError(err))
	}
	return Page[T]{Items: items, Next: nextLogCursor(list, from, last, len(items))}, nil
}

// readIndexed reads one page of up to limit rows of a list of kinds with
// readPage, each row's last column its log index, and returns the items and
// the last one's index.
func readIndexed[T any](ctx context.Context, s *Store, site string, kinds listKinds, limit int, sql string, args []any) ([]T, int64, error) {
	var items []T
	var last int64
	err := s.readPage(ctx, site, kinds, limit, sql, args, func(rows pgx.Rows) (n int, err error) {
		items, last, err = collectIndexed[T](rows)
		return len(items), err
	})
	return items, last, err
}

// keyWalk is the statement that walks list key table (as k) at site $1 in
// log order from index $2, under conds, for one page (lim, pageLimit's),
// returning cols.
func keyWalk(table, cols string, conds []string, lim string) string {
	return `SELECT ` + cols + ` FROM ` + table + ` k
			WHERE k.site = $1 AND k.leaf_index >= $2` + strings.Join(append([]string{""}, conds...), " AND ") + `
			ORDER BY k.leaf_index` + lim
}

// revisionByKey joins to a page's keys k (id, revision) at site $1 the
// revision of t each names, as alias: read by its key, a lateral subquery
// the planner cannot flatten, so a page is one probe per row in the walk's
// order and never a hash of every record of the site.
func revisionByKey(t table, alias string) string {
	return `CROSS JOIN LATERAL (SELECT ` + t.columns() + ` FROM ` + t.name + `
			WHERE site = $1 AND id = k.id AND revision = k.revision OFFSET 0) ` + alias
}

// rowByID joins to the rows r (with an id) at site $1 the row of table
// each names, with columns, as alias: read by its key in a lateral subquery
// the planner cannot flatten, so it stays one probe per row whatever the
// statistics (byIDAtSite).
func rowByID(table, columns, alias, r string) string {
	return `CROSS JOIN LATERAL (SELECT ` + columns + ` FROM ` + table + `
			WHERE ` + byIDAtSite(r) + ` OFFSET 0) ` + alias
}

// byIDAtSite is the condition that finds the row of r.id at site $1 in a
// table whose key leads with the id (id, site): the list keys, sign_offs.
// The site is checked as a filter the planner cannot turn into an index
// condition ((site = $1) IS TRUE), so the key's id is the only way in. With
// the site as a plain condition, every other index of the table leads with
// site, and a plan made under statistics that know every site but this one
// (a new site filling up) took one of their site prefixes for a lookup: every
// row of the site for every row looked up (TestListPlansUnderYoungStatistics,
// TestSequencerRewriteReadsByKey).
func byIDAtSite(r string) string {
	return `id = ` + r + `.id AND (site = $1) IS TRUE`
}

// ofKind is the ids of the leaves of kind among l, and their log indexes
// when l's first leaf takes index size.
func (l *leafRows) ofKind(kind string, size uint64) (ids [][16]byte, at []int64) {
	for i, k := range l.kinds {
		if k == kind {
			ids, at = append(ids, l.ids[i]), append(at, int64(size)+int64(i))
		}
	}
	return ids, at
}

// rewrites reports whether leaves l could change a row already written to
// a list key of kinds: a leaf of one of kinds that is not the first
// revision of a record of the list's own kind (kinds[0]). A first revision
// is logged once and its row written when it is, so no row of it is there
// before. The rule readPage waits by (pageWait), read from a pass's leaves.
func (l *leafRows) rewrites(kinds listKinds) bool {
	for i, k := range l.kinds {
		if slices.Contains(kinds, k) && (k != kinds[0] || l.revisions[i] != 1) {
			return true
		}
	}
	return false
}

// keyRefresh is the statement that writes the rows of list key table
// (columns named) for the records $2 at site $1 from the view
// <table>_derived: each record read by its key through a lateral subquery
// the planner cannot flatten, so statistics taken while the site was small
// cannot turn it into a read of every record of the site.
func keyRefresh(table, columns string) string { return keyRefreshOf(table, columns, "$2::uuid[]") }

// keyRefreshOf is keyRefresh for the records of the id array ids.
func keyRefreshOf(table, columns, ids string) string {
	return `INSERT INTO ` + table + ` (` + columns + `) SELECT ` + prefixed("d.", columns) + `
	FROM (SELECT DISTINCT id FROM unnest(` + ids + `) u(id)) u
	CROSS JOIN LATERAL (SELECT ` + columns + ` FROM ` + table + `_derived WHERE site = $1 AND id = u.id OFFSET 0) d`
}

// keyDelete is the statement that removes the rows of list key table for
// the records $2 at site $1: each found by its key, then deleted by its
// address.
func keyDelete(table string) string { return keyDeleteOf(table, "$2::uuid[]") }

// queueKeyDelete queues a key delete (keyDeleteOf) on the sequencer's
// batch of writes, behind a SET LOCAL that has PostgreSQL plan it, and every
// statement after it in the pass, for its arguments and the tables as they
// are. A prepared statement's plan made once for any arguments (the generic
// plan, taken after five executions) is kept until the table's statistics
// change; made while the table was a few pages, it scanned every row of the
// table for the addresses, and with autovacuum off it was never replaced:
// each pass then read the whole list (457 buffers a pass at 20,000 coupons
// in the create benchmark, growing with the table;
// TestSequencerKeyDeleteReadsByAddress). Planning the pass's statements
// costs about 1 ms, in passes that delete only (listedLeaves.queue).
func queueKeyDelete(b *pgx.Batch, sql string, args ...any) {
	b.Queue(`SET LOCAL plan_cache_mode = force_custom_plan`)
	b.Queue(sql, args...)
}

// keyDeleteOf is keyDelete for the records of the id array ids. The rows
// are named by address alone: a condition on the site beside them let a
// planner with no statistics read every row of the site through another
// index (TestSequencerRewriteReadsByKey, never analysed).
func keyDeleteOf(table, ids string) string {
	return `DELETE FROM ` + table + ` WHERE ctid = ANY (ARRAY(
	SELECT k.ctid FROM unnest(` + ids + `) u(id)
	CROSS JOIN LATERAL (SELECT ctid FROM ` + table + ` WHERE ` + byIDAtSite("u") + ` OFFSET 0) k))`
}

// rangeKeys is the keys of a page of a time range walked without an
// equality filter: walk (one page of keys of table in log order under the
// given conditions) for each day of the range's partial months through
// dayCol and for each whole month between through monthCol, the heads
// merged in log order. The range's bounds join f's arguments; keyCols are
// the columns each walk returns, as b.<column>.
func (f *filter) rangeKeys(w dayWalk, table, dayCol, monthCol, keyCols, lim string, walk func(conds []string) string) string {
	arg := func(v any) string {
		f.args = append(f.args, v)
		return "$" + strconv.Itoa(len(f.args))
	}
	walks := []string{`SELECT b.* FROM (SELECT day FROM generate_series(` + arg(w.head[0]) + `::date, ` + arg(w.head[1]) + `::date, interval '1 day') day
			UNION ALL SELECT day FROM generate_series(` + arg(w.tail[0]) + `::date, ` + arg(w.tail[1]) + `::date, interval '1 day') day) d
		CROSS JOIN LATERAL (` + walk(append(slices.Clone(f.conds), "k."+dayCol+" = d.day::date")) + `) b`}
	if w.months {
		walks = append(walks, `SELECT b.* FROM (SELECT min(`+monthCol+`) AS lo, max(`+monthCol+`) AS hi FROM `+table+` WHERE site = $1) span
		CROSS JOIN generate_series(greatest(span.lo, `+arg(w.monthFrom)+`::date), least(span.hi, `+arg(w.monthTo)+`::date), interval '1 month') m(month)
		CROSS JOIN LATERAL (`+walk(append(slices.Clone(f.conds), "k."+monthCol+" = m.month::date"))+`) b`)
	}
	return `SELECT ` + keyCols + ` FROM (` + strings.Join(walks, "\n\t\tUNION ALL ") + `) b
		ORDER BY b.leaf_index` + lim
}

// signedKey is a list key whose rows carry their revision's logged sign-off
// (procedure_list, qualification_list; migration 000057): the sequencer
// rewrites a record's row when one of its own leaves, or the leaf of a
// sign-off of it, takes its index.
type signedKey struct {
	entity          string    // the records' leaf kind
	kinds           listKinds // the leaves its rows are made from (readPage)
	delete, refresh string    // $1 site, $2 record ids, $3 sign-off ids
}

// newSignedKey is the signed list key table of the records of kind (a sign-off's
// record_kind, also their leaf kind), with its columns named.
func newSignedKey(table, kind, columns string) signedKey {
	// The records $2 and those the sign-offs $3 sign, each once, as one
	// array; a sign-off is found by its key.
	ids := `WITH ids AS (SELECT array_agg(DISTINCT id) AS ids FROM (SELECT unnest($2::uuid[]) AS id
		UNION ALL SELECT so.record_id FROM unnest($3::uuid[]) s(id)
			CROSS JOIN LATERAL (SELECT record_id FROM sign_offs WHERE ` + byIDAtSite("s") + ` AND record_kind = '` + kind + `' OFFSET 0) so) c) `
	all := "(SELECT ids FROM ids)::uuid[]"
	return signedKey{entity: kind, kinds: listKinds{kind, signOffTable.entity},
		delete: ids + keyDeleteOf(table, all), refresh: ids + keyRefreshOf(table, columns, all)}
}

// queue adds to the sequencer's batch of writes the rewrite of the rows of
// the records among the pass's leaves (out) and of those its sign-offs
// sign; neither, no statement.
func (k signedKey) queue(b *pgx.Batch, site string, out *leafRows) {
	ids, _ := out.ofKind(k.entity, 0)
	signs, _ := out.ofKind(signOffTable.entity, 0)
	if len(ids) == 0 && len(signs) == 0 {
		return
	}
	queueKeyDelete(b, k.delete, site, ids, signs)
	b.Queue(k.refresh, site, ids, signs)
}
