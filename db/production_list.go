package db

import (
	"context"
	"fmt"
	"slices"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// The production records list pages in log order through production_list
// (migration 000043): one row per logged live production record with its log
// index and the columns the list filters on, each filter with an index
// (site, <column>, leaf_index). A leaf does not hold recorded_at, the key of
// the month partitions, so the sequencer cannot read a record's columns
// cheaply; the write that stores the records also stores their columns in
// production_list_pending, one row per pending log entry
// (queueProductionPending), and the sequencer, in the transaction that
// gives the entry's records their leaves, moves them into production_list
// with their log indexes (queueProductionList). The list thus agrees with
// the log a reader sees, and a client following the cursor sees every
// record exactly once, as with the other lists.

// productionListColumns are production_list's columns, named.
const productionListColumns = "site, id, leaf_index, recorded_at, recorded_day, recorded_month, procedure_id, welder_id, weld_id"

// queueProductionPending stores, in the transaction that writes recs and
// their pending log entry (named entry), the columns the list's key needs,
// in the entry's order; on a pipelined write it leaves with the next
// statement.
func queueProductionPending(ctx context.Context, tx pgx.Tx, site string, entry uuid.UUID, recs []ProductionRecord) error {
	ids, at, procs := make([]uuid.UUID, len(recs)), make([]time.Time, len(recs)), make([]uuid.UUID, len(recs))
	welders, welds := make([]string, len(recs)), make([]string, len(recs))
	for i := range recs {
		r := &recs[i]
		ids[i], at[i], procs[i], welders[i], welds[i] = r.ID, r.RecordedAt, r.ProcedureID, r.WelderID, r.WeldID
	}
	return queueExec(ctx, tx, `INSERT INTO production_list_pending (site, entry_id, ids, recorded_at, procedure_ids, welder_ids, weld_ids)
		VALUES ($1, $2, $3, $4, $5, $6, $7)`, site, entry, ids, at, procs, welders, welds)
}

// ProductionListRefresh moves the rows of the pending entries $2 at site $1
// into production_list, with the log indexes $4 of their records $3 (a
// record without an index, of an entry the sequencer refused, is dropped).
const ProductionListRefresh = `WITH d AS (DELETE FROM production_list_pending WHERE site = $1 AND entry_id = ANY($2)
		RETURNING ids, recorded_at, procedure_ids, welder_ids, weld_ids)
	INSERT INTO production_list (` + productionListColumns + `)
	SELECT $1, r.id, l.leaf_index, r.recorded_at, (r.recorded_at AT TIME ZONE 'UTC')::date,
		date_trunc('month', r.recorded_at AT TIME ZONE 'UTC')::date, r.procedure_id, r.welder_id, r.weld_id
	FROM d CROSS JOIN LATERAL unnest(d.ids, d.recorded_at, d.procedure_ids, d.welder_ids, d.weld_ids)
		AS r(id, recorded_at, procedure_id, welder_id, weld_id)
	JOIN unnest($3::uuid[], $4::bigint[]) AS l(id, leaf_index) ON l.id = r.id`

// queueProductionList adds to the sequencer's batch of writes the move of
// the production_list rows of the production entries among pend, whose
// leaves (out, from index size on) the pass writes; none, no statement.
func queueProductionList(b *pgx.Batch, site string, pend []pendingLeaf, out *leafRows, size uint64) {
	var entries, ids []uuid.UUID
	var at []int64
	for _, p := range pend {
		if p.Kind == SubjectProductionRecord {
			entries = append(entries, p.RecordID)
		}
	}
	if len(entries) == 0 {
		return
	}
	for i, k := range out.kinds {
		if k == SubjectProductionRecord {
			ids, at = append(ids, out.ids[i]), append(at, int64(size)+int64(i))
		}
	}
	b.Queue(ProductionListRefresh, site, entries, ids, at)
}

// listProduction returns one page of the production records matching pf in
// log order from index from: the page's keys walked in log order through
// the filter's index of production_list (the page size written into the
// statement), then each record read by its key, recorded_at included (one
// month's partition). A time range without an equality filter walks each
// day of its partial months and each whole month between, up to a page
// each, and merges the heads: at most (days + months) × limit index
// entries, none outside the range. flagged_only checks each entry walked
// for a flag, so it reads about limit / (share of records flagged) entries.
func (s *Store) listProduction(ctx context.Context, site string, pf ProductionRecordFilter, from int64, limit int) ([]ProductionRecord, int64, error) {
	f := newFilter()
	f.args[0], f.args[1] = site, from
	equality := false
	for _, e := range []struct {
		col string
		val any
		set bool
	}{
		{"procedure_id", pf.ProcedureID, pf.ProcedureID != nil},
		{"welder_id", pf.WelderID, pf.WelderID != ""},
		{"weld_id", pf.WeldID, pf.WeldID != ""},
	} {
		if e.set {
			f.add("k."+e.col+" = ?", e.val)
			equality = true
		}
	}
	if pf.RecordedFrom != nil {
		f.add("k.recorded_at >= ?", *pf.RecordedFrom)
	}
	if pf.RecordedTo != nil {
		f.add("k.recorded_at < ?", *pf.RecordedTo)
	}
	if pf.FlaggedOnly {
		// A scalar subquery, one probe of the flags' key per entry walked:
		// as EXISTS the planner may hash every flag of the site instead.
		f.add("(SELECT true FROM flags fl WHERE fl.site = $1 AND fl.subject_id = k.id LIMIT 1)")
	}
	lim := pageLimit(limit)
	walk := func(conds []string) string {
		return `SELECT k.id, k.recorded_at, k.leaf_index FROM production_list k
			WHERE k.site = $1 AND k.leaf_index >= $2` + strings.Join(append([]string{""}, conds...), " AND ") + `
			ORDER BY k.leaf_index` + lim
	}
	keys := walk(f.conds)
	if !equality && (pf.RecordedFrom != nil || pf.RecordedTo != nil) {
		w := splitDays(dayFloor(pf.RecordedFrom), dayCeil(pf.RecordedTo))
		arg := func(v any) string {
			f.args = append(f.args, v)
			return fmt.Sprintf("$%d", len(f.args))
		}
		walks := []string{`SELECT b.* FROM (SELECT day FROM generate_series(` + arg(w.head[0]) + `::date, ` + arg(w.head[1]) + `::date, interval '1 day') day
				UNION ALL SELECT day FROM generate_series(` + arg(w.tail[0]) + `::date, ` + arg(w.tail[1]) + `::date, interval '1 day') day) d
			CROSS JOIN LATERAL (` + walk(append(slices.Clone(f.conds), "k.recorded_day = d.day::date")) + `) b`}
		if w.months {
			walks = append(walks, `SELECT b.* FROM (SELECT min(recorded_month) AS lo, max(recorded_month) AS hi FROM production_list WHERE site = $1) span
			CROSS JOIN generate_series(greatest(span.lo, `+arg(w.monthFrom)+`::date), least(span.hi, `+arg(w.monthTo)+`::date), interval '1 month') m(month)
			CROSS JOIN LATERAL (`+walk(append(slices.Clone(f.conds), "k.recorded_month = m.month::date"))+`) b`)
		}
		keys = `SELECT b.id, b.recorded_at, b.leaf_index FROM (` + strings.Join(walks, "\n\t\tUNION ALL ") + `) b
			ORDER BY b.leaf_index` + lim
	}
	// Each record is read by its key, a lookup per key (LIMIT 1: the
	// planner cannot make it a hash join over every month), which probes
	// only the month of its recorded_at (pruned as it runs).
	sql := `SELECT ` + prefixed("p.", strings.Join(productionColumns, ", ")) + `, k.leaf_index
		FROM (` + keys + `) k
		CROSS JOIN LATERAL (SELECT ` + strings.Join(productionColumns, ", ") + ` FROM production_records p
			WHERE p.site = $1 AND p.id = k.id AND p.recorded_at = k.recorded_at LIMIT 1) p
		ORDER BY k.leaf_index`
	var items []ProductionRecord
	var last int64
	err := s.readPage(ctx, site, sql, f.args, func(rows pgx.Rows) (err error) {
		items, last, err = collectIndexed[ProductionRecord](rows)
		return err
	})
	return items, last, err
}

// dayFloor is the UTC day holding t (nil: unbounded).
func dayFloor(t *time.Time) *Date {
	if t == nil {
		return nil
	}
	d := DateOf(t.UTC())
	return &d
}

// dayCeil is the first UTC day starting at or after t (nil: unbounded):
// the days before it hold every time before t.
func dayCeil(t *time.Time) *Date {
	if t == nil {
		return nil
	}
	d := DateOf(t.UTC())
	if d.Before(t.UTC()) {
		d = DateOf(d.AddDate(0, 0, 1))
	}
	return &d
}

// RecheckProductionList compares the site's production_list with
// production_list_derived (the same rows computed from the live records and
// the log), and the records production_list_pending holds with those the
// site's pending log entries name; it returns each difference, none when
// both are derived exactly.
func (s *Store) RecheckProductionList(ctx context.Context, site string) ([]string, error) {
	diffs, err := s.recheckDerived(ctx, site, "production_list", "production_list_derived", productionListColumns, "production record")
	if err != nil {
		return nil, err
	}
	pending, err := s.recheckDerived(ctx, site, "production_list_pending_rows", "production_list_pending_derived",
		"site, entry_id, id, recorded_at, procedure_id, welder_id, weld_id", "pending production record")
	return append(diffs, pending...), err
}
