package db

import (
	"context"
	"fmt"
	"time"

	"github.com/google/uuid"
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
// cursor (so a follower sees each exactly once), each with its current flags
// (listProduction reads the page through the list's key, production_list).
func (s *Store) ProductionRecords(ctx context.Context, site string, pf ProductionRecordFilter, cursor string, limit int) (Page[ProductionRecord], error) {
	p, err := logPage("production_records", "production records", cursor, limit, func(from int64, limit int) ([]ProductionRecord, int64, error) {
		return s.listProduction(ctx, site, pf, from, limit)
	})
	if err != nil {
		return p, err
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
