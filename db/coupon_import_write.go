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
)

// importRows is what an import copies in besides its marks: the planned
// coupons' rows and their sections' laid out in the binary COPY format,
// from whose bytes each leaf is encoded (rowLeaves.rawFact, as a production
// stream's chunk encodes its leaves), so nothing is read back, and the
// rows' values as laid out. Laying it out needs no transaction.
type importRows struct {
	coupons, sections       *copyRows
	couponRows, sectionRows [][]any // as copied
	couponLeaf, sectionLeaf *rowLeaves
}

// importLeaves is the pending entries of an import's rows: one for the
// coupons, one for the sections (nil: none).
type importLeaves struct {
	coupons, sections *ManyLeaves
	err               error
}

// revisionColumns are metaColumns, then t's fields: the columns a revision
// row is written in.
func revisionColumns(t table) []string { return append(strings.Split(metaColumns, ", "), t.fields...) }

// queueClaimMarks queues the insert of the planned coupons' marks into
// current_marks, one statement over two arrays (a COPY takes two round
// trips: its start, then its rows). The marks' primary key refuses a mark
// another write claimed since the plan read the marks (errMarkTaken): the
// whole import is rolled back (ImportCoupons names the mark), and importing
// again finds that coupon.
func queueClaimMarks(ctx context.Context, tx pgx.Tx, p *importPlan) error {
	marks, ids := make([]string, len(p.create)), make([][16]byte, len(p.create))
	for i, pc := range p.create {
		marks[i], ids[i] = pc.in.Data.CouponMark, pc.id // ids as [16]byte: pgx's direct encoding
	}
	return queueExecMapped(ctx, tx, claimRefused, `INSERT INTO current_marks (site, kind, mark, record_id)
		SELECT $1, $2, m, r FROM unnest($3::text[], $4::uuid[]) AS c (m, r)`, p.site, couponMark.kind, marks, ids)
}

// claimRefused maps the marks' insert error: a mark already in
// current_marks is errMarkTaken.
func claimRefused(err error) error {
	var pg *pgconn.PgError
	if errors.As(err, &pg) && pg.Code == pgerrcode.UniqueViolation && pg.TableName == "current_marks" {
		return errMarkTaken
	}
	return fmt.Errorf("claim marks: %w", mapError(err))
}

// laidRows is one table's rows of an import, laid out for its COPY, or why
// they could not be.
type laidRows struct {
	rows *copyRows
	err  error
}

// prepareImport lays out the planned coupons, then their sections, and
// hands each table's rows to laid as soon as they are laid out (after an
// error, only the error). It returns the rows for their leaves, nil after
// an error.
func (s *Store) prepareImport(ctx context.Context, a Actor, p *importPlan, now time.Time, laid chan<- laidRows) *importRows {
	r, err := s.layImport(ctx, a, p, now, laid)
	if err != nil {
		laid <- laidRows{err: err}
		return nil
	}
	return r
}

// layImport is prepareImport until an error.
func (s *Store) layImport(ctx context.Context, a Actor, p *importPlan, now time.Time, laid chan<- laidRows) (*importRows, error) {
	r := &importRows{couponRows: make([][]any, len(p.create))}
	ck, err := leafKind(coupons.entity, 0)
	if err != nil {
		return nil, err
	}
	mk, err := leafKind(measurements.entity, 0)
	if err != nil {
		return nil, err
	}
	couponCols, sectionCols := revisionColumns(coupons), revisionColumns(measurements)
	if r.couponLeaf, err = newRowLeaves(ctx, s.pool, ck, coupons.name, couponCols); err != nil {
		return nil, err
	}
	if r.sectionLeaf, err = newRowLeaves(ctx, s.pool, mk, measurements.name, sectionCols); err != nil {
		return nil, err
	}
	for i, pc := range p.create {
		r.couponRows[i] = append([]any{a.Site, pc.id, 1, now, a.Name, "", false}, recordValues(pc.in.Data)...)
	}
	if r.coupons, err = encodeCopyRows(coupons.name, couponCols, r.couponLeaf.oids, r.couponRows); err != nil {
		return nil, err
	}
	laid <- laidRows{rows: r.coupons}
	for _, pc := range p.create {
		for k, sec := range pc.in.Sections {
			d := sec.Data
			d.CouponID = pc.id
			r.sectionRows = append(r.sectionRows, append([]any{a.Site, pc.sections[k], 1, now, a.Name, "", false}, recordValues(d)...))
		}
	}
	if r.sections, err = encodeCopyRows(measurements.name, sectionCols, r.sectionLeaf.oids, r.sectionRows); err != nil {
		return nil, err
	}
	laid <- laidRows{rows: r.sections}
	return r, nil
}

// leaves encodes every row's leaf from the bytes laid out for it and
// prepares the pending entries naming them, in row order.
func (r *importRows) leaves(s *Store, e LeafEntry) importLeaves {
	var out importLeaves
	tm := pgtype.NewMap()
	entry := func(rl *rowLeaves, laid *copyRows, rows [][]any) (*ManyLeaves, error) {
		if len(rows) == 0 {
			return nil, nil
		}
		ids, hashes := make([]uuid.UUID, len(rows)), make([][]byte, 0, len(rows))
		err := laid.eachRow(func(fields [][]byte) error {
			f, err := rl.rawFact(fields, tm)
			if err != nil {
				return err
			}
			hashes = append(hashes, f.LeafHash())
			return nil
		})
		if err != nil {
			return nil, err
		}
		for i, row := range rows {
			ids[i] = row[1].(uuid.UUID)
		}
		return s.newManyLeaves(rl.kind, e, 1, ids, hashes)
	}
	if out.coupons, out.err = entry(r.couponLeaf, r.coupons, r.couponRows); out.err != nil {
		return out
	}
	out.sections, out.err = entry(r.sectionLeaf, r.sections, r.sectionRows)
	return out
}

// writeImport writes the planned coupons inside tx: claims their marks,
// copies the coupon and section rows, writes their flags and logs a leaf
// per row (one pending entry for the coupons, one for the sections). While
// the database takes the marks the rows are laid out, and while it copies
// the rows the flags are evaluated and the leaves encoded.
func (s *Store) writeImport(ctx context.Context, tx pgx.Tx, a Actor, p *importPlan, j *importJudgement) error {
	if len(p.create) == 0 {
		return nil
	}
	now := s.now()
	if err := j.readChecks(ctx, tx, p, now); err != nil {
		return err
	}
	laid, flags, leaves := make(chan laidRows, 2), make(chan []*flagWriter, 1), make(chan importLeaves, 1)
	go func() {
		r := s.prepareImport(ctx, a, p, now, laid)
		flags <- j.evaluate(p, now)
		if r != nil {
			leaves <- r.leaves(s, LeafEntry{Site: a.Site, Actor: a.Name, Action: actionCreate, At: now})
		}
	}()
	// The marks are claimed in one round trip while the coupons are laid out.
	if err := queueClaimMarks(ctx, tx, p); err != nil {
		return err
	}
	if err := flushed(ctx, tx); err != nil {
		return err
	}
	for range 2 { // the coupons, then the sections, each as soon as laid out
		l := <-laid
		if l.err != nil {
			return l.err
		}
		if l.rows.n == 0 {
			continue
		}
		if err := copyIn(ctx, tx, l.rows); err != nil {
			return fmt.Errorf("copy %s: %w", l.rows.table, mapError(err))
		}
	}
	for _, w := range <-flags {
		if _, err := w.flush(ctx, tx); err != nil {
			return err
		}
	}
	l := <-leaves
	if l.err != nil {
		return l.err
	}
	for _, m := range []*ManyLeaves{l.coupons, l.sections} {
		if m == nil {
			continue
		}
		if err := appendMany(ctx, tx, m); err != nil {
			return err
		}
	}
	if !j.chosen { // no chart can hold them
		return nil
	}
	// The coupons join their groups' drift charts (drift.go), like a single create.
	couponIDs := make([]uuid.UUID, len(p.create))
	for i, pc := range p.create {
		couponIDs[i] = pc.id
	}
	return couponDrift(ctx, tx, now, a.Site, couponIDs...)
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
	err := s.pool.QueryRow(ctx, `SELECT mark FROM (`+storedMarksSQL+`) held ORDER BY mark LIMIT 1`,
		pgx.QueryExecModeExec, site, couponMark.kind, marks).Scan(&m)
	if err != nil {
		return fmt.Errorf("%w: another write took a mark of the file during the import; import the file again", ErrConflict)
	}
	return fmt.Errorf("%w: another write took the mark %q during the import; import the file again", ErrConflict, m)
}
