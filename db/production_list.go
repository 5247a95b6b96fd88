package db

import (
	"context"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// The production records list pages in log order through production_list
// (migration 000043): one row per logged live production record with its log
// index (every column, as coupon_list), each filter with an index (site,
// <column>, leaf_index), but the weld id, whose records are found through the
// weld claims' key (site, weld_id, procedure_id). A leaf does not hold recorded_at, the key of the
// month partitions, so the sequencer cannot read a record cheaply; the
// write that stores the records also stores their columns in
// production_list_pending, one row of arrays per pending log entry
// (queueProductionPending), and the sequencer, in the transaction that
// gives the entry's records their leaves, moves them into production_list
// with their log indexes (queueProductionList). The list thus agrees with
// the log a reader sees, and a client following the cursor sees every
// record exactly once, as with the other lists.

// productionListColumns are production_list's columns, named: the
// record's, then its log index, UTC day and month.
var productionListColumns = strings.Join(productionColumns, ", ") + ", leaf_index, recorded_day, recorded_month"

// queueProductionPending stores, in the transaction that writes recs and
// their pending log entry (named entry), the records' columns for the
// list's key, as one row of arrays in the entry's order; on a pipelined
// write it leaves with the next statement. Every record of a write shares
// its batch, creation time and author.
func queueProductionPending(ctx context.Context, tx pgx.Tx, entry uuid.UUID, recs []ProductionRecord) error {
	n := len(recs)
	// Ids as [16]byte, pgx's direct encoding of a uuid (a uuid.UUID takes
	// its driver.Valuer path: text written, then parsed again).
	ids, procs, at := make([][16]byte, n), make([][16]byte, n), make([]time.Time, n)
	welds, welders := make([]string, n), make([]string, n)
	current, voltage, travel, feed, ctwd := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n), make([]*float64, n)
	for i := range recs {
		r := &recs[i]
		ids[i], procs[i], at[i], welds[i], welders[i] = r.ID, r.ProcedureID, r.RecordedAt, r.WeldID, r.WelderID
		current[i], voltage[i], travel[i], feed[i], ctwd[i] = r.CurrentA, r.VoltageV, r.TravelSpeedMMPerS, r.WireFeedSpeedMPerMin, r.CTWDMM
	}
	r := &recs[0]
	return queueExec(ctx, tx, `INSERT INTO production_list_pending (site, entry_id, batch_id, created_at, created_by,
		ids, procedure_ids, weld_ids, welder_ids, recorded_ats, currents_a, voltages_v, travel_speeds_mm_s, wire_feed_speeds_m_min, ctwds_mm)
		VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15)`,
		r.Site, entry, r.BatchID, r.CreatedAt, r.CreatedBy, ids, procs, welds, welders, at, current, voltage, travel, feed, ctwd)
}

// ProductionListRefresh moves the records of the pending entries $2 at
// site $1 into production_list, with the log indexes $4 of their records
// $3 (a record without an index, of an entry the sequencer refused, is
// dropped).
var ProductionListRefresh = `WITH w AS (DELETE FROM production_list_pending WHERE site = $1 AND entry_id = ANY($2) RETURNING *)
	INSERT INTO production_list (` + productionListColumns + `)
	SELECT ` + strings.Join(productionColumns, ", ") + `, l.leaf_index, (recorded_at AT TIME ZONE 'UTC')::date,
		date_trunc('month', recorded_at AT TIME ZONE 'UTC')::date
	FROM (SELECT w.site, w.batch_id, w.created_at, w.created_by, r.* FROM w
		CROSS JOIN LATERAL unnest(w.ids, w.procedure_ids, w.weld_ids, w.welder_ids, w.recorded_ats, w.currents_a, w.voltages_v,
			w.travel_speeds_mm_s, w.wire_feed_speeds_m_min, w.ctwds_mm)
		AS r(id, procedure_id, weld_id, welder_id, recorded_at, current_a, voltage_v, travel_speed_mm_s, wire_feed_speed_m_min, ctwd_mm)) r
	JOIN unnest($3::uuid[], $4::bigint[]) AS l(id, leaf_index) USING (id)`

// queueProductionList adds to the sequencer's batch of writes the move of
// the production_list rows of the production entries among pend, whose
// leaves (out, from index size on) the pass writes; none, no statement.
func queueProductionList(b *pgx.Batch, site string, pend []pendingLeaf, out *leafRows, size uint64) {
	var entries []uuid.UUID
	for _, p := range pend {
		if p.Kind == SubjectProductionRecord {
			entries = append(entries, p.RecordID)
		}
	}
	if len(entries) == 0 {
		return
	}
	ids, at := out.ofKind(SubjectProductionRecord, size)
	b.Queue(ProductionListRefresh, site, entries, ids, at)
}

// listProduction returns one page of the production records matching pf in
// log order from index from: the page's keys walked in log order through
// the filter's index of production_list (the page size written into the
// statement), then each row read by its key from the same table. A time range without an equality filter walks each
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
		{"k.procedure_id", pf.ProcedureID, pf.ProcedureID != nil},
		{"k.welder_id", pf.WelderID, pf.WelderID != ""},
		// A weld's records are found by the weld claims' key (site, weld_id,
		// procedure_id; migration 000048): each claim's record is a row of the
		// list's key when it is logged and live, and at most one per procedure.
		{"w.weld_id", pf.WeldID, pf.WeldID != ""},
	} {
		if e.set {
			f.add(e.col+" = ?", e.val)
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
	table := "production_list"
	if pf.WeldID != "" {
		table = "production_welds w, production_list"
		f.conds = append(f.conds, "w.site = k.site", "w.record_id = k.id")
	}
	walk := func(conds []string) string {
		return keyWalk(table, "k.id, k.recorded_at, k.leaf_index", conds, lim)
	}
	keys := walk(f.conds)
	if !equality && (pf.RecordedFrom != nil || pf.RecordedTo != nil) {
		w := splitDays(dayFloor(pf.RecordedFrom), dayCeil(pf.RecordedTo))
		keys = f.rangeKeys(w, "production_list", "recorded_day", "recorded_month", "b.id, b.recorded_at, b.leaf_index", lim, walk)
	}
	sql := `SELECT ` + prefixed("c.", strings.Join(productionColumns, ", ")) + `, k.leaf_index
		FROM (` + keys + `) k
		` + rowByID("production_list", strings.Join(productionColumns, ", "), "c", "k") + `
		ORDER BY k.leaf_index`
	return readIndexed[ProductionRecord](ctx, s, site, listKinds{SubjectProductionRecord}, limit, sql, f.args)
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
		strings.Join(productionColumns, ", ")+", entry_id", "pending production record")
	return append(diffs, pending...), err
}
