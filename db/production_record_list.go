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

// ProductionRecords lists production records in creation order after the
// cursor (keyset on the time-ordered id), each with its current flags.
func (s *Store) ProductionRecords(ctx context.Context, site string, pf ProductionRecordFilter, cursor string, limit int) (Page[ProductionRecord], error) {
	if limit <= 0 || limit > MaxPageSize {
		limit = MaxPageSize
	}
	f := filter{args: []any{site}}
	if cursor != "" {
		after, err := afterID("production_records", cursor)
		if err != nil {
			return Page[ProductionRecord]{}, fmt.Errorf("db: list production records: %w", err)
		}
		f.add("id > ?", after)
	}
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
	where := "site = $1"
	if len(f.conds) > 0 {
		where += " AND " + strings.Join(f.conds, " AND ")
	}
	f.args = append(f.args, limit+1)
	cols := strings.Join(productionColumns, ", ")
	rows, _ := s.pool.Query(ctx, "SELECT "+cols+" FROM production_records WHERE "+where+
		fmt.Sprintf(" ORDER BY id LIMIT $%d", len(f.args)), f.args...)
	items, err := pgx.CollectRows(rows, pgx.RowToStructByName[ProductionRecord])
	if err != nil {
		return Page[ProductionRecord]{}, fmt.Errorf("db: list production records: %w", mapError(err))
	}
	p := Page[ProductionRecord]{Items: items}
	if len(items) > limit {
		p.Items, p.Next = items[:limit], idCursor("production_records", items[limit-1].ID)
	}
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
