package db

import (
	"context"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// ProductionRecordFilter selects production records; zero fields do not
// filter. RecordedFrom is inclusive, RecordedTo exclusive.
type ProductionRecordFilter struct {
	ProcedureID  *uuid.UUID
	WeldID       string
	WelderID     string
	RecordedFrom *time.Time
	RecordedTo   *time.Time
	FlaggedOnly  bool
}

// ProductionRecords lists logged production records in log order after the
// cursor (so a follower sees each exactly once), each with its current flags.
func (s *Store) ProductionRecords(ctx context.Context, site string, pf ProductionRecordFilter, cursor string, limit int) (Page[ProductionRecord], error) {
	if limit <= 0 || limit > MaxPageSize {
		limit = MaxPageSize
	}
	from, err := logCursor("production_records", cursor)
	if err != nil {
		return Page[ProductionRecord]{}, fmt.Errorf("db: list production records: %w", err)
	}
	f := filter{args: []any{site, from}}
	if pf.ProcedureID != nil {
		f.add("procedure_id = ?", *pf.ProcedureID)
	}
	if pf.WeldID != "" {
		f.add("weld_id = ?", pf.WeldID)
	}
	if pf.WelderID != "" {
		f.add("welder_id = ?", pf.WelderID)
	}
	if pf.RecordedFrom != nil {
		f.add("recorded_at >= ?", *pf.RecordedFrom)
	}
	if pf.RecordedTo != nil {
		f.add("recorded_at < ?", *pf.RecordedTo)
	}
	if pf.FlaggedOnly {
		f.add("EXISTS (SELECT 1 FROM flags fl WHERE fl.site = production_records.site AND fl.subject_id = production_records.id)")
	}
	where := "true"
	if len(f.conds) > 0 {
		where = strings.Join(f.conds, " AND ")
	}
	cols := make([]string, len(productionColumns))
	for i, c := range productionColumns {
		cols[i] = "production_records." + c
	}
	var items []ProductionRecord
	var last int64
	switch {
	case len(f.conds) == 0:
		items, last, err = s.productionLeaves(ctx, site, from, limit)
	case pf.ProcedureID != nil || pf.WeldID != "" || pf.WelderID != "" || pf.RecordedFrom != nil || pf.RecordedTo != nil:
		// A condition with an index of its own: the matching records are
		// read through it first (apart from the leaves: OFFSET 0), then
		// each one's leaf, and the page is the first by log index. A walk
		// of the leaves would look each record up in every month
		// (procedure_id measured 1.7 s a page at 1,000,000 records).
		err = s.readPage(ctx, site, "SELECT "+prefixed("p.", strings.Join(productionColumns, ", "))+", lg.leaf_index"+
			" FROM (SELECT "+strings.Join(productionColumns, ", ")+" FROM production_records WHERE site = $1 AND "+where+" OFFSET 0) p"+
			" JOIN log_leaves lg ON lg.site = $1 AND lg.record_id = p.id AND lg.kind = 'production_record' AND lg.leaf_index >= $2"+
			" ORDER BY lg.leaf_index"+pageLimit(limit), f.args, func(rows pgx.Rows) (err error) {
			items, last, err = collectIndexed[ProductionRecord](rows)
			return err
		})
	default:
		err = s.readPage(ctx, site, "SELECT "+strings.Join(cols, ", ")+", lg.leaf_index FROM log_leaves lg"+
			" JOIN production_records ON production_records.id = lg.record_id AND production_records.site = lg.site"+
			" WHERE lg.site = $1 AND lg.kind = 'production_record' AND lg.leaf_index >= $2 AND "+where+
			" ORDER BY lg.leaf_index"+pageLimit(limit), f.args, func(rows pgx.Rows) (err error) {
			items, last, err = collectIndexed[ProductionRecord](rows)
			return err
		})
	}
	if err != nil {
		return Page[ProductionRecord]{}, fmt.Errorf("db: list production records: %w", mapError(err))
	}
	p := Page[ProductionRecord]{Items: items, Next: nextLogCursor("production_records", from, last, len(items))}
	ids := make([]uuid.UUID, len(p.Items))
	for i := range p.Items {
		ids[i] = p.Items[i].ID
	}
	flags, err := flagsOf(ctx, s.pool, site, ids)
	if err != nil {
		return Page[ProductionRecord]{}, fmt.Errorf("db: list production records: %w", err)
	}
	for i := range p.Items {
		p.Items[i].Flags = flags[p.Items[i].ID]
		if p.Items[i].Flags == nil {
			p.Items[i].Flags = []Flag{}
		}
	}
	return p, nil
}

// productionLeaves reads the production records of the next limit
// production leaves from index from, in log order (the unfiltered list).
// The records are partitioned by month of recorded_at, which a leaf does not
// hold, so a lookup of one leaf's record probes every month's key: leaf by
// leaf that was an index scan of each month per leaf (0.5 s a page at
// 1,000,000 records over seven years). Instead the page's leaves are read
// first and their records looked up together, one scan of each month's key
// for all of them. A record of a detached month has a leaf but no row in
// production_records: when the page is not full and every leaf read had a
// record or not, the leaves after them are read the same way.
func (s *Store) productionLeaves(ctx context.Context, site string, from int64, limit int) ([]ProductionRecord, int64, error) {
	leaves := func(n int) string {
		return `SELECT leaf_index, record_id FROM log_leaves
			WHERE site = $1 AND kind = 'production_record' AND leaf_index >= $2 ORDER BY leaf_index` + pageLimit(n)
	}
	// The records' lookup is planned apart from the leaves (OFFSET 0), with
	// the leaves' ids as one array, so it is not a probe per leaf.
	page := func(n int) string {
		return `WITH lg AS MATERIALIZED (` + leaves(n) + `)
		SELECT ` + prefixed("p.", strings.Join(productionColumns, ", ")) + `, lg.leaf_index
		FROM lg JOIN (SELECT ` + strings.Join(productionColumns, ", ") + ` FROM production_records
			WHERE site = $1 AND id = ANY (ARRAY(SELECT record_id FROM lg)) OFFSET 0) p ON p.id = lg.record_id
		ORDER BY lg.leaf_index`
	}
	var items []ProductionRecord
	last := int64(-1)
	read := func(rows pgx.Rows) error {
		got, l, err := collectIndexed[ProductionRecord](rows)
		items = append(items, got...)
		if len(got) > 0 {
			last = l
		}
		return err
	}
	n := limit // leaves read by the last page's statement, from index from
	if err := s.readPage(ctx, site, page(n), []any{site, from}, read); err != nil {
		return nil, 0, err
	}
	for len(items) < limit {
		// The page is short: the end of the log, or records of detached
		// months among the n leaves read.
		var count int
		var end *int64
		if err := s.pool.QueryRow(ctx, `SELECT count(*), max(leaf_index) FROM (`+leaves(n)+`) l`, site, from).Scan(&count, &end); err != nil {
			return nil, 0, err
		}
		if count < n || end == nil {
			break
		}
		from, n = *end+1, limit-len(items)
		rows, _ := s.pool.Query(ctx, page(n), site, from)
		if err := read(rows); err != nil {
			return nil, 0, err
		}
	}
	return items, last, nil
}
