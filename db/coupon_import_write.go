package db

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"etchlog/predict"
)

// importRows is what an import copies in: the planned coupons' marks,
// coupon rows and section rows laid out in the binary COPY format, and one
// pending entry for the coupons' leaves and one for the sections', each
// leaf encoded from the values copied (leaf_values.go), so nothing is read
// back. Laying it out needs no transaction.
type importRows struct {
	marks, coupons, sections *copyRows
	couponLeaves             *ManyLeaves
	sectionLeaves            *ManyLeaves // nil: no sections
}

// markColumns are current_marks' columns as an import copies them.
var markColumns = []string{"site", "kind", "mark", "record_id"}

// markTypes are the types of markColumns (migration 000008).
var markTypes = []uint32{pgtype.TextOID, pgtype.TextOID, pgtype.TextOID, pgtype.UUIDOID}

// revisionColumns are metaColumns, then t's fields: the columns a revision
// row is written in.
func revisionColumns(t table) []string { return append(strings.Split(metaColumns, ", "), t.fields...) }

// prepareImport lays out the planned coupons for writeImport.
func (s *Store) prepareImport(ctx context.Context, a Actor, p *importPlan, now time.Time) (*importRows, error) {
	ck, err := leafKind(coupons.entity, 0)
	if err != nil {
		return nil, err
	}
	mk, err := leafKind(measurements.entity, 0)
	if err != nil {
		return nil, err
	}
	couponCols, sectionCols := revisionColumns(coupons), revisionColumns(measurements)
	cl, err := newRowLeaves(ctx, s.pool, ck, coupons.name, couponCols)
	if err != nil {
		return nil, err
	}
	ml, err := newRowLeaves(ctx, s.pool, mk, measurements.name, sectionCols)
	if err != nil {
		return nil, err
	}
	marks := make([][]any, len(p.create))
	couponRows := make([][]any, len(p.create))
	couponIDs, couponHashes := make([]uuid.UUID, len(p.create)), make([][]byte, len(p.create))
	var sectionRows [][]any
	var sectionIDs []uuid.UUID
	var sectionHashes [][]byte
	for i, pc := range p.create {
		marks[i] = []any{a.Site, couponMark.kind, pc.in.Data.CouponMark, pc.id}
		couponRows[i] = append([]any{a.Site, pc.id, 1, now, a.Name, "", false}, recordValues(pc.in.Data)...)
		f, err := cl.fact(couponRows[i])
		if err != nil {
			return nil, err
		}
		couponIDs[i], couponHashes[i] = pc.id, f.LeafHash()
		for k, sec := range pc.in.Sections {
			d := sec.Data
			d.CouponID = pc.id
			row := append([]any{a.Site, pc.sections[k], 1, now, a.Name, "", false}, recordValues(d)...)
			f, err := ml.fact(row)
			if err != nil {
				return nil, err
			}
			sectionRows = append(sectionRows, row)
			sectionIDs, sectionHashes = append(sectionIDs, pc.sections[k]), append(sectionHashes, f.LeafHash())
		}
	}
	r := &importRows{}
	if r.marks, err = encodeCopyRows("current_marks", markColumns, markTypes, marks); err != nil {
		return nil, err
	}
	if r.coupons, err = encodeCopyRows(coupons.name, couponCols, cl.oids, couponRows); err != nil {
		return nil, err
	}
	if r.sections, err = encodeCopyRows(measurements.name, sectionCols, ml.oids, sectionRows); err != nil {
		return nil, err
	}
	entry := LeafEntry{Site: a.Site, Actor: a.Name, Action: actionCreate, At: now}
	if r.couponLeaves, err = s.newManyLeaves(ck, entry, 1, couponIDs, couponHashes); err != nil {
		return nil, err
	}
	if len(sectionIDs) > 0 {
		if r.sectionLeaves, err = s.newManyLeaves(mk, entry, 1, sectionIDs, sectionHashes); err != nil {
			return nil, err
		}
	}
	return r, nil
}

// writeImport writes the planned coupons inside tx: claims their marks,
// copies the coupon and section rows, logs a leaf per row (one pending
// entry for the coupons, one for the sections) and writes their flags.
func (s *Store) writeImport(ctx context.Context, tx pgx.Tx, a Actor, p *importPlan) error {
	if len(p.create) == 0 {
		return nil
	}
	now := s.now()
	r, err := s.prepareImport(ctx, a, p, now)
	if err != nil {
		return err
	}
	// The marks' primary key refuses a mark another write claimed since
	// the plan read the marks: the whole import is rolled back (ImportCoupons
	// names the mark), and importing again finds that coupon.
	if err := copyIn(ctx, tx, r.marks); err != nil {
		var pg *pgconn.PgError
		if errors.As(err, &pg) && pg.Code == pgerrcode.UniqueViolation && pg.TableName == "current_marks" {
			return errMarkTaken
		}
		return fmt.Errorf("claim marks: %w", mapError(err))
	}
	for _, c := range []*copyRows{r.coupons, r.sections} {
		if c.n == 0 {
			continue
		}
		if err := copyIn(ctx, tx, c); err != nil {
			return fmt.Errorf("copy %s: %w", c.table, mapError(err))
		}
	}
	if err := appendMany(ctx, tx, r.couponLeaves); err != nil {
		return err
	}
	if r.sectionLeaves != nil {
		if err := appendMany(ctx, tx, r.sectionLeaves); err != nil {
			return err
		}
	}
	return p.writeFlags(ctx, tx, now)
}

// errMarkTaken is a planned mark claimed by another write during the import.
var errMarkTaken = errors.New("a mark was claimed during the import")

// takenMark names one of the planned marks that another record holds now,
// after errMarkTaken: the conflict to report.
func (s *Store) takenMark(ctx context.Context, site string, p *importPlan) error {
	marks := make([]string, len(p.create))
	for i, pc := range p.create {
		marks[i] = pc.in.Data.CouponMark
	}
	var m string
	err := s.pool.QueryRow(ctx, `SELECT mark FROM current_marks WHERE site = $1 AND kind = $2 AND mark = ANY($3) ORDER BY mark LIMIT 1`,
		pgx.QueryExecModeExec, site, couponMark.kind, marks).Scan(&m)
	if err != nil {
		return fmt.Errorf("%w: another write took a mark of the file during the import; import the file again", ErrConflict)
	}
	return fmt.Errorf("%w: another write took the mark %q during the import; import the file again", ErrConflict, m)
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
