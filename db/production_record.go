package db

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"
)

// MaxProductionBatch caps how many production records one batch may hold.
const MaxProductionBatch = 1000

// ProductionRecordData is the parameter log of one production weld. Units:
// A, V, mm/s (travel speed), m/min (wire feed speed), mm.
type ProductionRecordData struct {
	ProcedureID          uuid.UUID `db:"procedure_id" json:"procedure_id" validate:"required"`
	WeldID               string    `db:"weld_id" json:"weld_id" validate:"required,max=64"`
	WelderID             string    `db:"welder_id" json:"welder_id" validate:"required,max=64"`
	RecordedAt           time.Time `db:"recorded_at" json:"recorded_at" validate:"required,plausible_day"`
	CurrentA             float64   `db:"current_a" json:"current_a" validate:"required,quantity"`
	VoltageV             float64   `db:"voltage_v" json:"voltage_v" validate:"required,quantity"`
	TravelSpeedMMPerS    float64   `db:"travel_speed_mm_s" json:"travel_speed_mm_s" validate:"required,quantity"`
	WireFeedSpeedMPerMin float64   `db:"wire_feed_speed_m_min" json:"wire_feed_speed_m_min" validate:"required,quantity"`
	CTWDMM               *float64  `db:"ctwd_mm" json:"ctwd_mm,omitempty" validate:"omitempty,quantity"`
}

// ProductionRecord is one stored production record with its current flags.
type ProductionRecord struct {
	Site      string    `db:"site" json:"site"`
	ID        uuid.UUID `db:"id" json:"id"`
	BatchID   uuid.UUID `db:"batch_id" json:"batch_id"`
	CreatedAt time.Time `db:"created_at" json:"created_at"`
	CreatedBy string    `db:"created_by" json:"created_by"`
	ProductionRecordData
	Flags []Flag `db:"-" json:"flags"`
}

// productionColumns are the bookkeeping columns, then the data struct's (recordColumns).
var productionColumns = append([]string{"site", "id", "batch_id", "created_at", "created_by"},
	recordColumns(ProductionRecordData{})...)

// MaxProductionChunk caps how many production records one transaction of a
// stream holds (ProductionChunk).
const MaxProductionChunk = 20000

// CreateProductionRecords stores a batch of production records, their batch
// row and their log leaves, and their flags, in one transaction: all or
// nothing. A procedure that does not exist (or is voided) is named by the
// first row that refers to it, e.g. records[17].procedure_id.
func (s *Store) CreateProductionRecords(ctx context.Context, a Actor, recs []ProductionRecordData) ([]ProductionRecord, error) {
	if len(recs) == 0 || len(recs) > MaxProductionBatch {
		return nil, &FieldError{Field: "records", Reason: fmt.Sprintf("give 1 to %d records (got %d)", MaxProductionBatch, len(recs))}
	}
	p, err := s.PrepareProductionChunk(ctx, a, recs, func(i int) string { return fmt.Sprintf("records[%d]", i) })
	if err == nil {
		err = s.storeProduction(ctx, p)
	}
	if err != nil {
		return nil, fmt.Errorf("db: create production records: %w", err)
	}
	return p.out, nil
}

// ProductionChunk stores one chunk of a production stream as one batch, in
// one transaction, like CreateProductionRecords: all of it or none. row
// names row i of the chunk in a refusal (e.g. "line 18"). It answers the
// batch id and how many of the records were flagged. It is
// PrepareProductionChunk then StoreProductionChunk, which a stream runs
// apart so that it prepares one chunk while the database writes another.
func (s *Store) ProductionChunk(ctx context.Context, a Actor, recs []ProductionRecordData, row func(i int) string) (ChunkResult, error) {
	if len(recs) == 0 || len(recs) > MaxProductionChunk {
		return ChunkResult{}, &FieldError{Field: "records", Reason: fmt.Sprintf("give 1 to %d records (got %d)", MaxProductionChunk, len(recs))}
	}
	p, err := s.PrepareProductionChunk(ctx, a, recs, row)
	if err != nil {
		return ChunkResult{}, fmt.Errorf("db: store production chunk: %w", err)
	}
	return s.StoreProductionChunk(ctx, p)
}

// ChunkResult is what one stored chunk of a production stream holds.
type ChunkResult struct {
	BatchID uuid.UUID
	Records int
	Flagged int // records with at least one flag
}

// weldColumns are production_welds' columns in the order a write copies them.
var weldColumns = []string{"site", "procedure_id", "weld_id", "record_id"}

// weldTypes are the types of weldColumns (migration 000015).
var weldTypes = []uint32{pgtype.TextOID, pgtype.UUIDOID, pgtype.TextOID, pgtype.UUIDOID}

// flagBatch evaluates a new batch against each procedure's latest ranges,
// writes the flags and attaches them to the records.
func flagBatch(ctx context.Context, tx pgx.Tx, now time.Time, site string, recs []ProductionRecord) error {
	writers := map[uuid.UUID]*flagWriter{}
	for i := range recs {
		p := recs[i].ProcedureID
		w, seen := writers[p]
		if !seen {
			pr, err := latestRanges(ctx, tx, site, p, 0)
			switch {
			case err == nil:
				w = newFlagWriter(site, now, pr)
			case !errors.Is(err, ErrNotFound):
				return err
			}
			writers[p] = w // nil: the procedure has no ranges yet, nothing to flag
		}
		if w == nil {
			continue
		}
		before := len(w.flags)
		w.add(&subject{kind: SubjectProductionRecord, id: recs[i].ID, at: recs[i].RecordedAt, obs: productionObservation(recs[i].ProductionRecordData)})
		recs[i].Flags = append(recs[i].Flags, w.flags[before:]...)
	}
	for _, w := range writers {
		if w == nil {
			continue
		}
		if _, err := w.flush(ctx, tx); err != nil {
			return err
		}
	}
	return nil
}
