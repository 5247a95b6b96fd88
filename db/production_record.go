package db

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db/logfmt"
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
	out, err := s.writeProduction(ctx, a, recs, func(i int) string { return fmt.Sprintf("records[%d]", i) })
	if err != nil {
		return nil, fmt.Errorf("db: create production records: %w", err)
	}
	return out, nil
}

// ProductionChunk stores one chunk of a production stream as one batch, in
// one transaction, like CreateProductionRecords: all of it or none. row
// names row i of the chunk in a refusal (e.g. "line 18"). It answers the
// batch id and how many of the records were flagged.
func (s *Store) ProductionChunk(ctx context.Context, a Actor, recs []ProductionRecordData, row func(i int) string) (ChunkResult, error) {
	if len(recs) == 0 || len(recs) > MaxProductionChunk {
		return ChunkResult{}, &FieldError{Field: "records", Reason: fmt.Sprintf("give 1 to %d records (got %d)", MaxProductionChunk, len(recs))}
	}
	out, err := s.writeProduction(ctx, a, recs, row)
	if err != nil {
		return ChunkResult{}, fmt.Errorf("db: store production chunk: %w", err)
	}
	r := ChunkResult{BatchID: out[0].BatchID, Records: len(out)}
	for i := range out {
		if len(out[i].Flags) > 0 {
			r.Flagged++
		}
	}
	return r, nil
}

// ChunkResult is what one stored chunk of a production stream holds.
type ChunkResult struct {
	BatchID uuid.UUID
	Records int
	Flagged int // records with at least one flag
}

// writeProduction is the one write of production records: a batch row and
// its leaf, the records (COPY), one weld claim per record (COPY into
// production_welds, whose key refuses a weld logged before), one leaf per
// record encoded from the copied values (COPY into log_pending), and the
// flags, evaluated in one pass over the rows per procedure's ranges.
func (s *Store) writeProduction(ctx context.Context, a Actor, recs []ProductionRecordData, row func(int) string) ([]ProductionRecord, error) {
	type weldKey struct {
		proc uuid.UUID
		weld string
	}
	first := make(map[weldKey]int, len(recs))
	for i, r := range recs {
		if j, ok := first[weldKey{r.ProcedureID, r.WeldID}]; ok {
			return nil, &FieldError{Field: row(i) + ".weld_id",
				Reason: fmt.Sprintf("repeats %s.weld_id %q of the same procedure; a weld is logged once", row(j), r.WeldID)}
		}
		first[weldKey{r.ProcedureID, r.WeldID}] = i
	}
	key := s.logKey()
	if key == nil {
		return nil, ErrNoLogKey
	}
	k, err := leafKind("production_record", 0)
	if err != nil {
		return nil, err
	}
	at, err := leafOrder(k)
	if err != nil {
		return nil, err
	}
	out, err := s.writeProductionOnce(ctx, a, recs, row, k, at, key)
	if errors.Is(err, errMonthGone) { // an administrator detached a month this process had seen
		s.forgetMonths()
		out, err = s.writeProductionOnce(ctx, a, recs, row, k, at, key)
	}
	return out, err
}

// writeProductionOnce is one attempt of writeProduction.
func (s *Store) writeProductionOnce(ctx context.Context, a Actor, recs []ProductionRecordData, row func(int) string,
	k LeafKind, at []int, key *logfmt.Signer) ([]ProductionRecord, error) {
	if err := s.ensureMonths(ctx, recs); err != nil {
		return nil, err
	}
	now := s.now()
	batch, err := uuid.NewV7()
	if err != nil {
		return nil, err
	}
	out := make([]ProductionRecord, len(recs))
	rows := make([][]any, len(recs))
	welds := make([][]any, len(recs))
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
		welds[i] = []any{a.Site, r.ProcedureID, r.WeldID, id}
		if _, ok := firstRow[r.ProcedureID]; !ok {
			firstRow[r.ProcedureID] = i
			procs = append(procs, r.ProcedureID)
		}
	}
	err = s.tx(ctx, func(tx pgx.Tx) error {
		fds, err := productionFields(ctx, tx, k)
		if err != nil {
			return err
		}
		pending := make([][]any, len(rows))
		for i, r := range rows {
			f, err := productionFact(k, fds, at, r)
			if err != nil {
				return err
			}
			h := f.LeafHash()
			pending[i] = []any{a.Site, k.Kind, k.Version, out[i].ID, 1, h, key.Tag(a.Site, h), a.Name, "create", "", now}
		}
		if err := lockProcedures(ctx, tx, a.Site, procs, false); err != nil {
			return err
		}
		for _, p := range procs {
			if err := exists(ctx, tx, procedures, a.Site, p, row(firstRow[p])+".procedure_id"); err != nil {
				return err
			}
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
			if noPartition(err) {
				return errMonthGone
			}
			return mapError(err)
		}
		if _, err := tx.CopyFrom(ctx, pgx.Identifier{"production_welds"}, weldColumns, pgx.CopyFromRows(welds)); err != nil {
			return mapError(err)
		}
		if _, err := tx.CopyFrom(ctx, pgx.Identifier{"log_pending"}, pendingColumnList, pgx.CopyFromRows(pending)); err != nil {
			return mapError(err)
		}
		return flagBatch(ctx, tx, now, a.Site, out)
	})
	if errors.Is(err, ErrConflict) {
		// A weld logged before, or by a write racing this one: name its record.
		if i, id, lerr := earlierWeld(ctx, s.pool, a.Site, recs); lerr == nil && i >= 0 {
			err = duplicateWeld(recs, i, id, row)
		}
	}
	if err != nil {
		return nil, err
	}
	return out, nil
}

// weldColumns are production_welds' columns in the order a write copies them.
var weldColumns = []string{"site", "procedure_id", "weld_id", "record_id"}

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
