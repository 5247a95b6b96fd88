package db

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

	"etchlog/predict"
)

// writeImport writes the planned coupons inside tx: claims their marks,
// copies the coupon and section rows, logs a leaf per row as stored (one
// pending entry for the coupons, one for the sections) and writes their
// flags.
func (s *Store) writeImport(ctx context.Context, tx pgx.Tx, a Actor, p *importPlan) error {
	if len(p.create) == 0 {
		return nil
	}
	now := s.now()
	if err := p.claimMarks(ctx, tx); err != nil {
		return err
	}
	couponIDs := make([]uuid.UUID, len(p.create))
	couponRows := make([][]any, len(p.create))
	var sectionIDs []uuid.UUID
	var sectionRows [][]any
	for i, pc := range p.create {
		couponIDs[i] = pc.id
		couponRows[i] = copyValues(append([]any{a.Site, pc.id, 1, now, a.Name, "", false}, recordValues(pc.in.Data)...))
		for k, sec := range pc.in.Sections {
			d := sec.Data
			d.CouponID = pc.id
			sectionIDs = append(sectionIDs, pc.sections[k])
			sectionRows = append(sectionRows, copyValues(append([]any{a.Site, pc.sections[k], 1, now, a.Name, "", false}, recordValues(d)...)))
		}
	}
	if err := copyRevisions(ctx, tx, coupons, couponRows); err != nil {
		return err
	}
	if err := copyRevisions(ctx, tx, measurements, sectionRows); err != nil {
		return err
	}
	entry := LeafEntry{Site: a.Site, Actor: a.Name, Action: actionCreate, At: now}
	if err := s.logStored(ctx, tx, coupons, couponIDs, entry); err != nil {
		return err
	}
	if err := s.logStored(ctx, tx, measurements, sectionIDs, entry); err != nil {
		return err
	}
	if err := p.writeFlags(ctx, tx, now); err != nil {
		return err
	}
	// The coupons join their groups' drift charts (drift.go), like a single create.
	return importDrift(ctx, tx, now, a.Site, couponIDs)
}

// claimMarks claims every planned coupon's mark in current_marks. A mark
// another write claimed since the plan read the marks is a conflict: the
// whole import is rolled back, and importing again finds that coupon.
func (p *importPlan) claimMarks(ctx context.Context, tx pgx.Tx) error {
	marks := make([]string, len(p.create))
	ids := make([]uuid.UUID, len(p.create))
	for i, pc := range p.create {
		marks[i], ids[i] = pc.in.Data.CouponMark, pc.id
	}
	rows, _ := tx.Query(ctx, `INSERT INTO current_marks (site, kind, mark, record_id)
		SELECT $1, $2, m, id FROM unnest($3::text[], $4::uuid[]) AS u(m, id)
		ON CONFLICT DO NOTHING RETURNING mark`, p.site, couponMark.kind, marks, ids)
	claimed, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return fmt.Errorf("claim marks: %w", mapError(err))
	}
	if len(claimed) == len(marks) {
		return nil
	}
	slices.Sort(claimed)
	for _, m := range marks {
		if _, ok := slices.BinarySearch(claimed, m); !ok {
			return fmt.Errorf("%w: another write took the mark %q during the import; import the file again", ErrConflict, m)
		}
	}
	return nil
}

// copyValues gives a row's record ids to COPY as 16 bytes each (pgx would
// otherwise write each uuid.UUID through its text form).
func copyValues(row []any) []any {
	for i, v := range row {
		switch id := v.(type) {
		case uuid.UUID:
			row[i] = pgtype.UUID{Bytes: id, Valid: true}
		case *uuid.UUID:
			if id == nil {
				row[i] = pgtype.UUID{}
			} else {
				row[i] = pgtype.UUID{Bytes: *id, Valid: true}
			}
		}
	}
	return row
}

// copyRevisions copies revision rows (metaColumns, then t's fields) into t.
func copyRevisions(ctx context.Context, tx pgx.Tx, t table, rows [][]any) error {
	if len(rows) == 0 {
		return nil
	}
	cols := append(strings.Split(metaColumns, ", "), t.fields...)
	if _, err := tx.CopyFrom(ctx, pgx.Identifier{t.name}, cols, pgx.CopyFromRows(rows)); err != nil {
		return fmt.Errorf("copy %s: %w", t.name, mapError(err))
	}
	return nil
}

// logStored logs revision 1 of each record in ids of table t with one
// pending entry of many leaves (log_many.go), each leaf encoded from its row
// as stored, in id order; the sequencer gives every row its own leaf.
func (s *Store) logStored(ctx context.Context, tx pgx.Tx, t table, ids []uuid.UUID, e LeafEntry) error {
	if len(ids) == 0 {
		return nil
	}
	k, err := leafKind(t.entity, 0)
	if err != nil {
		return err
	}
	e.Kind = k.Kind
	// One seek per id (the LATERAL ... LIMIT 1 keeps it a seek whatever the
	// statistics say of a site that grew a moment ago): a scan of the site's
	// rows would slow every part as the site grows.
	cols := make([]string, len(k.Columns))
	for i, c := range k.Columns {
		cols[i] = "r." + c
	}
	rows, _ := tx.Query(ctx, "SELECT "+strings.Join(cols, ", ")+" FROM unnest($2::uuid[]) AS u(id) CROSS JOIN LATERAL (SELECT * FROM "+k.Table+
		" t WHERE t.site = $1 AND t.id = u.id AND t.revision = 1 LIMIT 1) r ORDER BY r.id", e.Site, ids)
	stored := make([]uuid.UUID, 0, len(ids))
	hashes := make([][]byte, 0, len(ids))
	idCol := slices.Index(k.Columns, "id")
	for rows.Next() {
		f, err := factOf(k, rows)
		if err != nil {
			rows.Close()
			return err
		}
		id, err := uuid.Parse(f.Fields[idCol].Value)
		if err != nil {
			rows.Close()
			return fmt.Errorf("db: %s row id: %w", k.Kind, err)
		}
		stored, hashes = append(stored, id), append(hashes, f.LeafHash())
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return fmt.Errorf("db: log %s: %w", k.Kind, mapError(err))
	}
	if len(stored) != len(ids) {
		return fmt.Errorf("db: log %s: %d of %d rows read back", k.Kind, len(stored), len(ids))
	}
	m, err := s.newManyLeaves(k, e, 1, stored, hashes)
	if err != nil {
		return err
	}
	return appendMany(ctx, tx, m)
}

// writeFlags evaluates every new coupon of a procedure against that
// procedure's latest ranges and its group's active calibration, read once
// per procedure and per group, and copies the flags in.
func (p *importPlan) writeFlags(ctx context.Context, tx pgx.Tx, now time.Time) error {
	type checkKey struct {
		group CalibrationGroup
		proc  uuid.UUID
	}
	writers := map[uuid.UUID]*flagWriter{}
	checks := map[checkKey]*predict.PenetrationCheck{}
	var order []uuid.UUID
	for _, pc := range p.create {
		if pc.in.Data.ProcedureID == nil { // a coupon of a qualification record alone answers to no ranges
			continue
		}
		proc := p.procs[*pc.in.Data.ProcedureID]
		w, ok := writers[proc.ID]
		if !ok {
			pr, err := latestRanges(ctx, tx, p.site, proc.ID, 0)
			if errors.Is(err, ErrNotFound) { // no ranges yet: model flags only
				pr, err = ProcedureRanges{Site: p.site, ProcedureID: proc.ID}, nil
			}
			if err != nil {
				return err
			}
			w = newFlagWriter(p.site, now, pr)
			writers[proc.ID] = w
			order = append(order, proc.ID)
		}
		c := Coupon{Meta: Meta{Site: p.site, ID: pc.id, Revision: 1, CreatedAt: now}, CouponData: pc.in.Data}
		c.inherit(procedureDefaults(proc))
		key := checkKey{couponGroup(c).canonical(), proc.ID}
		check, ok := checks[key]
		if !ok {
			var err error
			if check, err = penetrationCheck(ctx, tx, p.site, key.group, proc.MinPenetrationMM); err != nil {
				return err
			}
			checks[key] = check
		}
		var rec *QualificationRecord
		if id := pc.in.Data.QualificationRecordID; id != nil {
			r := p.records[*id]
			rec = &r
		}
		secs := make([]predict.Section, len(pc.in.Sections))
		for k, sec := range pc.in.Sections {
			secs[k] = predict.Section{Label: sec.Data.Section, PenetrationMM: sec.Data.PenetrationMM}
		}
		w.add(newCouponSubject(c, secs, requirementsOf(proc, rec), check))
	}
	for _, id := range order {
		if _, err := writers[id].flush(ctx, tx); err != nil {
			return err
		}
	}
	return nil
}
