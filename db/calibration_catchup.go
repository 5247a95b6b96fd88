package db

import (
	"bytes"
	"context"
	"fmt"
	"slices"
	"strings"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// An activation's catch-up (calibration_recompute.go runs it): the coupons
// of the group written while the activation judged it, found through the
// log after the mark read before judging and judged again in rounds
// without the flag locks; then, under the locks, those written since the
// last round are judged and the flags swapped (reconcile).

// readMark reads the site's last leaf index and its pending leaves: what
// was committed before what this transaction reads next.
func (r *groupRecompute) readMark(ctx context.Context, tx pgx.Tx) error {
	var seqs []int64
	if err := tx.QueryRow(ctx, `SELECT coalesce((SELECT max(leaf_index) FROM log_leaves WHERE site = $1), -1),
			coalesce((SELECT array_agg(seq) FROM log_pending WHERE site = $1), '{}')`, r.site).Scan(&r.mark, &seqs); err != nil {
		return fmt.Errorf("log mark: %w", err)
	}
	r.seen = make(map[int64]bool, len(seqs))
	for _, q := range seqs {
		r.seen[q] = true
	}
	return nil
}

// catchUpRounds and catchUpEnough bound catchUp: at most that many rounds,
// ending early once a round finds fewer coupons written than that. A round
// that finds few is quick (a read of the log past the mark and those
// coupons), and every coupon it takes is one the locked step does not.
const (
	catchUpRounds = 8
	catchUpEnough = 8
)

// catchUp evaluates again, still without the flag locks, the coupons
// written since the mark, moving the mark before each round, so that the
// reconciliation under the locks has only the last round's writes left.
// A procedure, ranges or record written meanwhile leaves it to reconcile.
func (r *groupRecompute) catchUp(ctx context.Context, tx pgx.Tx) error {
	for range catchUpRounds {
		mark, seen := r.mark, r.seen
		if err := r.readMark(ctx, tx); err != nil {
			return err
		}
		changed, other, err := writtenSince(ctx, tx, r.site, mark, seen)
		if err != nil {
			return err
		}
		if other { // the whole group again, under the locks
			r.mark, r.seen = mark, seen
			return nil
		}
		if len(changed) > 0 {
			if err := r.evaluateChanged(ctx, tx, changed); err != nil {
				return err
			}
		}
		if len(changed) < catchUpEnough {
			return nil
		}
	}
	return nil
}

// writtenSince lists what site logged after the mark: every leaf pending
// now (each row a pending entry names) or integrated past leaf index mark whose pending row was not among
// seen (committed before the mark, so part 1 read it). It returns the
// coupons written (directly, or by one of their sections), and whether any
// procedure, qualified ranges or qualification record was written (these
// change what many coupons are judged by).
func writtenSince(ctx context.Context, tx pgx.Tx, site string, mark int64, seen map[int64]bool) ([]uuid.UUID, bool, error) {
	rows, _ := tx.Query(ctx, `
		WITH l AS (
			SELECT seq, kind, unnest(coalesce(record_ids, ARRAY[record_id])) AS record_id FROM log_pending WHERE site = $1
			UNION SELECT pending_seq, kind, record_id FROM log_leaves WHERE site = $1 AND leaf_index > $2)
		SELECT l.seq, l.kind, coalesce(m.coupon_id, l.record_id)
		FROM l LEFT JOIN LATERAL (SELECT coupon_id FROM measurements m
			WHERE l.kind = 'measurement' AND m.site = $1 AND m.id = l.record_id LIMIT 1) m ON true
		WHERE l.kind IN ('coupon', 'measurement', 'procedure', 'procedure_ranges', 'qualification_record')`, site, mark)
	var ids []uuid.UUID
	other := false
	var seq int64
	var kind string
	var id uuid.UUID
	_, err := pgx.ForEachRow(rows, []any{&seq, &kind, &id}, func() error {
		switch {
		case seen[seq]:
		case kind == "coupon" || kind == "measurement":
			ids = append(ids, id)
		default:
			other = true
		}
		return nil
	})
	if err != nil {
		return nil, false, fmt.Errorf("written since the activation began: %w", err)
	}
	slices.SortFunc(ids, func(a, b uuid.UUID) int { return bytes.Compare(a[:], b[:]) })
	return slices.Compact(ids), other, nil
}

// reconcile is part 3, under the exclusive flag locks: the coupons written
// since part 1 are evaluated again (all of them when a procedure, ranges or
// record was written meanwhile), then the flags are swapped and the chart
// redrawn.
func (r *groupRecompute) reconcile(ctx context.Context, tx pgx.Tx) error {
	changed, other, err := writtenSince(ctx, tx, r.site, r.mark, r.seen)
	if err != nil {
		return err
	}
	if other { // judged by something else now: part 1 again, under the lock
		for _, t := range []string{"activation_members", "activation_flags", "activation_old"} {
			if _, err := tx.Exec(ctx, `DELETE FROM `+t); err != nil {
				return err
			}
		}
		r.procs = nil
		if err := r.evaluateAll(ctx, tx); err != nil {
			return err
		}
	} else if len(changed) > 0 {
		if err := r.evaluateChanged(ctx, tx, changed); err != nil {
			return err
		}
	}
	if r.family == CalibrationJacksonFixed.Family() {
		if _, err := tx.Exec(ctx, `DELETE FROM flags f USING activation_old o
			WHERE f.site = $1 AND f.subject_id = o.subject_id AND f.variable = o.variable AND f.kind = o.kind`, r.site); err != nil {
			return fmt.Errorf("clear model flags: %w", err)
		}
		if _, err := tx.Exec(ctx, `INSERT INTO flags (`+strings.Join(flagColumns, ", ")+`)
			SELECT `+strings.Join(flagColumns, ", ")+` FROM activation_flags`); err != nil {
			return fmt.Errorf("write model flags: %w", mapError(err))
		}
	}
	return r.redraw(ctx, tx)
}
