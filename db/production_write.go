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

// PreparedChunk is a chunk of production records ready to store: ids
// drawn, rows laid out for COPY, each record's leaf encoded from the values
// it will copy and tagged. Preparing needs no transaction, so a stream
// prepares the next chunk while the database writes this one.
type PreparedChunk struct {
	actor    Actor
	recs     []ProductionRecordData
	row      func(int) string
	batch    uuid.UUID
	now      time.Time
	out      []ProductionRecord
	rows     *copyRows   // the records, laid out for COPY
	welds    *copyRows   // one weld claim per record
	leaves   *ManyLeaves // one pending entry naming every record's leaf
	procs    []uuid.UUID
	firstRow map[uuid.UUID]int
}

// PrepareProductionChunk checks that no weld repeats within the chunk and
// prepares recs for StoreProductionChunk; row names row i in a refusal.
// created_at is the time of preparing, moments before the transaction.
func (s *Store) PrepareProductionChunk(ctx context.Context, a Actor, recs []ProductionRecordData, row func(int) string) (*PreparedChunk, error) {
	if len(recs) == 0 || len(recs) > MaxProductionChunk {
		return nil, &FieldError{Field: "records", Reason: fmt.Sprintf("give 1 to %d records (got %d)", MaxProductionChunk, len(recs))}
	}
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
	k, err := leafKind("production_record", 0)
	if err != nil {
		return nil, err
	}
	lv, err := newRowLeaves(ctx, s.pool, k, "production_records", productionColumns)
	if err != nil {
		return nil, err
	}
	p := &PreparedChunk{actor: a, recs: recs, row: row, now: s.now(), firstRow: map[uuid.UUID]int{},
		out: make([]ProductionRecord, len(recs))}
	ids, hashes := make([]uuid.UUID, len(recs)), make([][]byte, len(recs))
	if p.batch, err = uuid.NewV7(); err != nil {
		return nil, err
	}
	// The rows leave as laid out here, typed as the table describes its
	// columns, and each leaf is encoded from the bytes laid out for its row.
	rows := newCopyWriter("production_records", productionColumns, lv.oids, len(recs))
	welds := newCopyWriter("production_welds", weldColumns, weldTypes, len(recs))
	vals, weld := make([]any, 0, len(productionColumns)), make([]any, len(weldColumns))
	var fields [][]byte
	tm := pgtype.NewMap()
	for i, r := range recs {
		id, err := uuid.NewV7()
		if err != nil {
			return nil, err
		}
		r.RecordedAt = r.RecordedAt.UTC().Truncate(time.Microsecond)
		p.out[i] = ProductionRecord{Site: a.Site, ID: id, BatchID: p.batch, CreatedAt: p.now, CreatedBy: a.Name, ProductionRecordData: r, Flags: []Flag{}}
		vals = append(append(vals[:0], a.Site, id, p.batch, p.now, a.Name), recordValues(r)...)
		if err := rows.add(vals); err != nil {
			return nil, err
		}
		fields = rows.fields(fields)
		f, err := lv.rawFact(fields, tm)
		if err != nil {
			return nil, err
		}
		weld[0], weld[1], weld[2], weld[3] = a.Site, r.ProcedureID, r.WeldID, id
		if err := welds.add(weld); err != nil {
			return nil, err
		}
		ids[i], hashes[i] = id, f.LeafHash()
		if _, ok := p.firstRow[r.ProcedureID]; !ok {
			p.firstRow[r.ProcedureID] = i
			p.procs = append(p.procs, r.ProcedureID)
		}
	}
	p.rows, p.welds = rows.done(), welds.done()
	// The entry is named by the batch: one batch, one entry.
	e := LeafEntry{Site: a.Site, ID: p.batch, Actor: a.Name, Action: "create", At: p.now}
	if p.leaves, err = s.newManyLeaves(k, e, 1, ids, hashes); err != nil {
		return nil, err
	}
	return p, nil
}

// StoreProductionChunk stores a prepared chunk as one batch in one
// transaction (storeProduction) and counts its flagged records.
func (s *Store) StoreProductionChunk(ctx context.Context, p *PreparedChunk) (ChunkResult, error) {
	if err := s.storeProduction(ctx, p); err != nil {
		return ChunkResult{}, fmt.Errorf("db: store production chunk: %w", err)
	}
	r := ChunkResult{BatchID: p.batch, Records: len(p.out)}
	for i := range p.out {
		if len(p.out[i].Flags) > 0 {
			r.Flagged++
		}
	}
	return r, nil
}

// storeProduction is the one write of production records: a batch row and
// its leaf, the records (COPY), one weld claim per record (COPY into
// production_welds, whose key refuses a weld logged before), one pending
// entry naming the records' prepared leaves (appendMany), and the flags, evaluated in one
// pass over the rows per procedure's ranges.
func (s *Store) storeProduction(ctx context.Context, p *PreparedChunk) error {
	err := s.storeProductionOnce(ctx, p)
	if errors.Is(err, errMonthGone) { // an administrator detached a month this process had seen
		s.forgetMonths()
		err = s.storeProductionOnce(ctx, p)
	}
	if errors.Is(err, ErrConflict) {
		// A weld logged before, or by a write racing this one: name its record.
		if i, id, lerr := earlierWeld(ctx, s.pool, p.actor.Site, p.recs); lerr == nil && i >= 0 {
			err = duplicateWeld(p.recs, i, id, p.row)
		}
	}
	return err
}

// storeProductionOnce is one attempt of storeProduction.
func (s *Store) storeProductionOnce(ctx context.Context, p *PreparedChunk) error {
	if err := s.ensureMonths(ctx, p.recs); err != nil {
		return err
	}
	a := p.actor
	return s.tx(ctx, func(tx pgx.Tx) error {
		if err := lockProcedures(ctx, tx, a.Site, p.procs, false); err != nil {
			return err
		}
		for _, pr := range p.procs {
			if err := exists(ctx, tx, procedures, a.Site, pr, p.row(p.firstRow[pr])+".procedure_id"); err != nil {
				return err
			}
		}
		if _, err := tx.Exec(ctx, `INSERT INTO production_batches (site, id, created_at, created_by, record_count, first_id, last_id, procedure_ids)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8)`, a.Site, p.batch, p.now, a.Name, len(p.out), p.out[0].ID, p.out[len(p.out)-1].ID, p.procs); err != nil {
			return mapError(err)
		}
		entry := LeafEntry{Kind: "production_batch", Site: a.Site, ID: p.batch, Revision: 1, Actor: a.Name, Action: "create", At: p.now}
		if err := s.AppendLeaf(ctx, tx, entry); err != nil {
			return err
		}
		if err := copyIn(ctx, tx, p.rows); err != nil {
			if noPartition(err) {
				return errMonthGone
			}
			return mapError(err)
		}
		if err := copyIn(ctx, tx, p.welds); err != nil {
			return mapError(err)
		}
		if err := appendMany(ctx, tx, p.leaves); err != nil {
			return err
		}
		if err := queueProductionPending(ctx, tx, p.batch, p.out); err != nil {
			return err
		}
		for i := range p.out {
			p.out[i].Flags = []Flag{}
		}
		return flagBatch(ctx, tx, p.now, a.Site, p.out)
	})
}
