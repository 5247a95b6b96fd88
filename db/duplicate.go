package db

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// couponByMark returns the id of the coupon whose current revision has mark at the site.
func couponByMark(ctx context.Context, q querier, site, mark string) (uuid.UUID, error) {
	var id uuid.UUID
	err := q.QueryRow(ctx, `SELECT record_id FROM current_marks WHERE site = $1 AND kind = 'coupon_mark' AND mark = $2`, site, mark).Scan(&id)
	if errors.Is(err, pgx.ErrNoRows) {
		return uuid.Nil, ErrNotFound
	}
	return id, err
}

// duplicateMark turns a failed coupon create into a DuplicateError naming the
// coupon that holds the mark, when that is why it failed.
func (s *Store) duplicateMark(ctx context.Context, site, mark string, err error) error {
	var dup *DuplicateError
	if !errors.Is(err, ErrConflict) || errors.As(err, &dup) { // claimMark names the holder already
		return err
	}
	id, lerr := couponByMark(ctx, s.pool, site, mark)
	if lerr != nil {
		return err
	}
	return fmt.Errorf("db: create coupon: %w", &DuplicateError{Field: "coupon_mark", ExistingID: id,
		Reason: fmt.Sprintf("coupon %s already has the mark %q; correct that one first or choose another (a retried create finds it with GET /v1/coupons?coupon_mark=)", id, mark)})
}

// duplicateKey turns a failed create of table t into a DuplicateError naming
// the record that already holds value in column (code, record_number), when
// that is why it failed.
func (s *Store) duplicateKey(ctx context.Context, t table, column, site, value string, err error) error {
	if !errors.Is(err, ErrConflict) {
		return err
	}
	var id uuid.UUID
	if s.pool.QueryRow(ctx, `SELECT id FROM `+t.name+` WHERE site = $1 AND `+column+` = $2 ORDER BY revision DESC LIMIT 1`,
		site, value).Scan(&id) != nil {
		return err
	}
	return fmt.Errorf("db: create %s: %w", t.entity, &DuplicateError{Field: column, ExistingID: id,
		Reason: fmt.Sprintf("%s %s already has the %s %q", strings.ReplaceAll(t.entity, "_", " "), id, strings.ReplaceAll(column, "_", " "), value)})
}

// earlierWeld finds a stored production record of the same procedure with
// one of the batch's weld ids; it returns the batch index it collides with.
func earlierWeld(ctx context.Context, q querier, site string, recs []ProductionRecordData) (int, uuid.UUID, error) {
	procs := make([]uuid.UUID, len(recs))
	welds := make([]string, len(recs))
	for i, r := range recs {
		procs[i], welds[i] = r.ProcedureID, r.WeldID
	}
	var ord int
	var id uuid.UUID
	err := q.QueryRow(ctx, `
		SELECT b.ord - 1, p.record_id
		FROM unnest($2::uuid[], $3::text[]) WITH ORDINALITY AS b(procedure_id, weld_id, ord)
		JOIN production_welds p ON p.site = $1 AND p.procedure_id = b.procedure_id AND p.weld_id = b.weld_id
		ORDER BY b.ord LIMIT 1`, site, procs, welds).Scan(&ord, &id)
	if errors.Is(err, pgx.ErrNoRows) {
		return -1, uuid.Nil, nil
	}
	return ord, id, err
}

// duplicateWeld is the refusal of a batch whose row i (named by row) repeats a stored weld id.
func duplicateWeld(recs []ProductionRecordData, i int, id uuid.UUID, row func(int) string) error {
	return &DuplicateError{Field: row(i) + ".weld_id", ExistingID: id,
		Reason: fmt.Sprintf("weld %q of this procedure is already logged as production record %s", recs[i].WeldID, id)}
}
