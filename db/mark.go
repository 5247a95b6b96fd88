package db

import (
	"context"
	"fmt"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// Marks are unique among a site's current records: a coupon's mark and a
// qualification record's number. A correction may change a mark (a coupon
// stamped or typed wrong keeps its measurements); the old mark is then free
// for another record. A void keeps the mark: the voided record still answers
// to it in the history, and a physical coupon may still carry it. The rule
// lives in the database (current_marks, whose primary key is the mark),
// maintained by claimMark in the writing transaction.

// markKind names what a mark marks; it is also the field the API names.
type markKind struct {
	kind   string // current_marks.kind
	field  string // the request field
	entity string
}

var (
	couponMark   = markKind{kind: "coupon_mark", field: "coupon_mark", entity: "coupon"}
	recordNumber = markKind{kind: "record_number", field: "record_number", entity: "qualification_record"}
)

// claimMark is the step that gives record m.ID the mark: it releases the
// record's previous mark if it differs and claims this one, or refuses with
// DuplicateError naming the holder. A concurrent claim of the same mark waits for the other
// transaction and then sees its outcome, so of two racing claims one wins.
// Revision 1 is a new record, which holds no mark to release.
func claimMark(ctx context.Context, k markKind, m Meta, mark string) step {
	return func(tx pgx.Tx) error {
		if m.Revision > 1 {
			// By the site and kind too, so the delete finds the row by
			// the whole of current_marks_record (record_id, kind, site).
			if err := queueExec(ctx, tx, `DELETE FROM current_marks WHERE site = $1 AND kind = $2 AND record_id = $3 AND mark <> $4`,
				m.Site, k.kind, m.ID, mark); err != nil {
				return err
			}
		}
		return queueRows(ctx, tx, k.claimed(ctx, tx, m, mark), `INSERT INTO current_marks (site, kind, mark, record_id) VALUES ($1, $2, $3, $4)
			ON CONFLICT DO NOTHING RETURNING record_id`, m.Site, k.kind, mark, m.ID)
	}
}

// claimed reads the answer of a statement that claims the mark for record
// m.ID: the claiming row's record_id when the INSERT went in. When it did
// not, the mark is held (by another record, or by this one when a
// correction keeps its mark): a statement of its own, after the INSERT
// waited for any holder still writing, reads who holds it.
func (k markKind) claimed(ctx context.Context, tx pgx.Tx, m Meta, mark string) func(pgx.Rows) error {
	return func(rows pgx.Rows) error {
		claimed, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
		switch {
		case rows.Err() != nil:
			return nil // the statement's own error is reported
		case err != nil:
			return err
		case len(claimed) > 0:
			return nil
		}
		return k.holder(ctx, tx, m, mark)
	}
}

// holder queues the read of the record holding the mark a claim did not
// get, refusing the write when it is another record than m's.
func (k markKind) holder(ctx context.Context, tx pgx.Tx, m Meta, mark string) error {
	return queueRows(ctx, tx, func(rows pgx.Rows) error {
		holder, err := pgx.CollectOneRow(rows, pgx.RowTo[uuid.UUID])
		if rows.Err() != nil {
			return nil
		}
		if err != nil {
			return err
		}
		return k.held(m.ID, holder, mark)
	}, `SELECT record_id FROM current_marks WHERE site = $1 AND kind = $2 AND mark = $3`, m.Site, k.kind, mark)
}

// held refuses the mark when its holder is not the record id.
func (k markKind) held(id, holder uuid.UUID, mark string) error {
	if holder != id {
		return &DuplicateError{Field: k.field, ExistingID: holder,
			Reason: fmt.Sprintf("%s %s already has the mark %q; correct that one first or choose another", k.entity, holder, mark)}
	}
	return nil
}

// RecheckMarks compares current_marks with the marks of the site's current
// records (voided ones included) and returns each difference; none means it
// is derived exactly from the records.
func (s *Store) RecheckMarks(ctx context.Context, site string) ([]string, error) {
	rows, _ := s.pool.Query(ctx, `
		WITH want AS (
			SELECT 'coupon_mark' AS kind, coupon_mark AS mark, id FROM coupons cur WHERE site = $1
			  AND NOT EXISTS (SELECT 1 FROM coupons l WHERE l.site = cur.site AND l.id = cur.id AND l.revision > cur.revision)
			UNION ALL
			SELECT 'record_number', record_number, id FROM qualification_records cur WHERE site = $1
			  AND NOT EXISTS (SELECT 1 FROM qualification_records l WHERE l.site = cur.site AND l.id = cur.id AND l.revision > cur.revision)),
		have AS (SELECT kind, mark, record_id AS id FROM current_marks WHERE site = $1)
		SELECT format('%s %s %s: %s', coalesce(w.kind, h.kind), coalesce(w.mark, h.mark), coalesce(w.id, h.id),
		              CASE WHEN h.id IS NULL THEN 'not in current_marks' ELSE 'in current_marks, not current' END)
		FROM want w FULL JOIN have h ON h.kind = w.kind AND h.mark = w.mark AND h.id = w.id
		WHERE w.id IS NULL OR h.id IS NULL
		ORDER BY 1`, site)
	diffs, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return nil, fmt.Errorf("db: recheck marks: %w", err)
	}
	return diffs, nil
}
