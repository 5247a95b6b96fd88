package db

import (
	"context"
	"fmt"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// The coupons a calibration was fitted to are not charted for drift. They
// depend only on the calibration (its selection as of the fit, or the
// coupon_ids stored with older calibrations), which no later write changes,
// so they are kept once per calibration in calibration_fitted (derived,
// migration 000033): a drift chart leaves them out with an anti-join, and a
// coupon write looks its own coupon up there, instead of deriving the
// selection again over the whole group. A calibration created now stores
// its set in the pass that fits it (fittedSink); an older one the first
// time a chart needs it (ensureFitted). RecheckDrift derives every stored
// set again and compares.

// fittedBatch is how many selected rows CreateCalibration reads between two
// writes of their fitted coupons (its memory holds at most that many ids).
const fittedBatch = 10_000

// fittedSink collects the coupons a calibration's fit takes, a batch at a
// time, and copies each batch into calibration_fitted.
type fittedSink struct {
	site  string
	calID uuid.UUID
	ids   []uuid.UUID
	count int
}

func (f *fittedSink) add(id uuid.UUID) { f.ids = append(f.ids, id) }

// flush copies the collected ids into calibration_fitted.
func (f *fittedSink) flush(ctx context.Context, tx pgx.Tx) error {
	if len(f.ids) == 0 {
		return nil
	}
	_, err := tx.CopyFrom(ctx, pgx.Identifier{"calibration_fitted"}, []string{"site", "calibration_id", "coupon_id"},
		pgx.CopyFromSlice(len(f.ids), func(i int) ([]any, error) { return []any{f.site, f.calID, f.ids[i]}, nil }))
	if err != nil {
		return fmt.Errorf("fitted coupons: %w", err)
	}
	f.count += len(f.ids)
	f.ids = f.ids[:0]
	return nil
}

// done flushes the last batch and marks the set as stored.
func (f *fittedSink) done(ctx context.Context, tx pgx.Tx) error {
	if err := f.flush(ctx, tx); err != nil {
		return err
	}
	_, err := tx.Exec(ctx, `INSERT INTO calibration_fitted_sets (site, calibration_id, coupons) VALUES ($1, $2, $3)`,
		f.site, f.calID, f.count)
	return err
}

// fittedStored reports whether calibration calID's fitted set is stored.
func fittedStored(ctx context.Context, q querier, site string, calID uuid.UUID) (bool, error) {
	var ok bool
	err := q.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM calibration_fitted_sets WHERE site = $1 AND calibration_id = $2)`,
		site, calID).Scan(&ok)
	if err != nil {
		return false, fmt.Errorf("fitted coupons of %s: %w", calID, err)
	}
	return ok, nil
}

// derivedFitted derives the coupons calibration calID was fitted to from
// its stored form: its coupon_ids, or its selection as of the fit (one pass
// over the site's coupons).
func derivedFitted(ctx context.Context, q querier, site string, calID uuid.UUID) ([]uuid.UUID, error) {
	var ids []uuid.UUID
	var sel *CalibrationSelection
	if err := q.QueryRow(ctx, `SELECT coupon_ids, selection FROM calibrations WHERE site = $1 AND id = $2`, site, calID).
		Scan(&ids, &sel); err != nil {
		return nil, fmt.Errorf("fitted coupons of %s: %w", calID, err)
	}
	if sel == nil {
		return ids, nil
	}
	ids, err := selectedIDs(ctx, q, site, *sel)
	if err != nil {
		return nil, fmt.Errorf("fitted coupons of %s: %w", calID, err)
	}
	return ids, nil
}

// ensureFitted stores calibration calID's fitted set unless it is stored
// already (calibrations created before the sets were kept): derived once,
// in tx. Two transactions deriving it at once write the same rows; the
// second waits for the first and adds nothing.
func ensureFitted(ctx context.Context, tx pgx.Tx, site string, calID uuid.UUID) error {
	ok, err := fittedStored(ctx, tx, site, calID)
	if err != nil || ok {
		return err
	}
	ids, err := derivedFitted(ctx, tx, site, calID)
	if err != nil {
		return err
	}
	if _, err := tx.Exec(ctx, `INSERT INTO calibration_fitted (site, calibration_id, coupon_id)
		SELECT $1, $2, unnest($3::uuid[]) ON CONFLICT DO NOTHING`, site, calID, ids); err != nil {
		return fmt.Errorf("fitted coupons of %s: %w", calID, err)
	}
	if _, err := tx.Exec(ctx, `INSERT INTO calibration_fitted_sets (site, calibration_id, coupons) VALUES ($1, $2, $3)
		ON CONFLICT DO NOTHING`, site, calID, len(ids)); err != nil {
		return fmt.Errorf("fitted coupons of %s: %w", calID, err)
	}
	return nil
}
