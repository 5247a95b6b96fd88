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
	err = s.readPage(ctx, site, "SELECT "+strings.Join(cols, ", ")+", lg.leaf_index FROM log_leaves lg"+
		" JOIN production_records ON production_records.id = lg.record_id AND production_records.site = lg.site"+
		" WHERE lg.site = $1 AND lg.kind = 'production_record' AND lg.leaf_index >= $2 AND "+where+
		" ORDER BY lg.leaf_index"+pageLimit(limit), f.args, func(rows pgx.Rows) (err error) {
		items, last, err = collectIndexed[ProductionRecord](rows)
		return err
	})
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
