package db

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
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

// CreateProductionRecords stores a batch of production records, their batch
// row and audit event, and their flags, in one transaction: all or nothing.
// A procedure that does not exist (or is voided) is named by the first row
// that refers to it, e.g. records[17].procedure_id.
func (s *Store) CreateProductionRecords(ctx context.Context, a Actor, recs []ProductionRecordData) ([]ProductionRecord, error) {
	if len(recs) == 0 || len(recs) > MaxProductionBatch {
		return nil, &FieldError{Field: "records", Reason: fmt.Sprintf("give 1 to %d records (got %d)", MaxProductionBatch, len(recs))}
	}
	type weldKey struct {
		proc uuid.UUID
		weld string
	}
	first := make(map[weldKey]int, len(recs))
	for i, r := range recs {
		if j, ok := first[weldKey{r.ProcedureID, r.WeldID}]; ok {
			return nil, &FieldError{Field: fmt.Sprintf("records[%d].weld_id", i),
				Reason: fmt.Sprintf("repeats records[%d].weld_id %q of the same procedure; a weld is logged once", j, r.WeldID)}
		}
		first[weldKey{r.ProcedureID, r.WeldID}] = i
	}
	now := s.now()
	batch, err := uuid.NewV7()
	if err != nil {
		return nil, err
	}
	out := make([]ProductionRecord, len(recs))
	rows := make([][]any, len(recs))
	firstRow := map[uuid.UUID]int{}
	var procs []uuid.UUID
	for i, r := range recs {
		id, err := uuid.NewV7()
		if err != nil {
			return nil, err
		}
		r.RecordedAt = r.RecordedAt.UTC().Truncate(time.Microsecond)
		out[i] = ProductionRecord{Site: a.Site, ID: id, BatchID: batch, CreatedAt: now, CreatedBy: a.Name, ProductionRecordData: r, Flags: []Flag{}}
		rows[i] = append([]any{a.Site, id, batch, now, a.Name}, recordValues(r)...)
		if _, ok := firstRow[r.ProcedureID]; !ok {
			firstRow[r.ProcedureID] = i
			procs = append(procs, r.ProcedureID)
		}
	}
	err = s.tx(ctx, func(tx pgx.Tx) error {
		if err := lockProcedures(ctx, tx, a.Site, procs, false); err != nil {
			return err
		}
		for _, p := range procs {
			if err := exists(ctx, tx, procedures, a.Site, p, fmt.Sprintf("records[%d].procedure_id", firstRow[p])); err != nil {
				return err
			}
		}
		if i, id, err := earlierWeld(ctx, tx, a.Site, recs); err != nil || i >= 0 {
			if err != nil {
				return err
			}
			return duplicateWeld(recs, i, id)
		}
		if _, err := tx.Exec(ctx, `INSERT INTO production_batches (site, id, created_at, created_by, record_count, first_id, last_id, procedure_ids)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8)`, a.Site, batch, now, a.Name, len(recs), out[0].ID, out[len(out)-1].ID, procs); err != nil {
			return mapError(err)
		}
		entry := LeafEntry{Kind: "production_batch", Site: a.Site, ID: batch, Revision: 1, Actor: a.Name, Action: "create", At: now}
		if err := s.AppendLeaf(ctx, tx, entry); err != nil {
			return err
		}
		if _, err := tx.CopyFrom(ctx, pgx.Identifier{"production_records"}, productionColumns, pgx.CopyFromRows(rows)); err != nil {
			return mapError(err)
		}
		// One leaf per production record, each encoded from its stored row.
		k, err := leafKind("production_record", 0)
		if err != nil {
			return err
		}
		recRows, _ := tx.Query(ctx, "SELECT "+strings.Join(k.Columns, ", ")+" FROM production_records WHERE site = $1 AND batch_id = $2 ORDER BY id", a.Site, batch)
		entry.Kind = k.Kind
		if err := s.appendRows(ctx, tx, k, recRows, entry); err != nil {
			return err
		}
		return flagBatch(ctx, tx, now, a.Site, out)
	})
	if errors.Is(err, ErrConflict) {
		// A batch racing this one stored the weld first: name its record.
		if i, id, lerr := earlierWeld(ctx, s.pool, a.Site, recs); lerr == nil && i >= 0 {
			err = duplicateWeld(recs, i, id)
		}
	}
	if err != nil {
		return nil, fmt.Errorf("db: create production records: %w", err)
	}
	return out, nil
}

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
