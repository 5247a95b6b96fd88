package db

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// A drift chart keeps its points between writes (drift_points, derived,
// migration 000033): per chart, each charted coupon's residual and SD
// against the chart's calibration and what the chart splits by, and in
// drift_charts the calibration they are against. A coupon write judges its
// own coupon again and reads the other points as stored, so it costs the
// chart's points (the coupons welded since the fit), not a read of every
// coupon of the group with its revisions, procedure and sections. The
// charts themselves (CUSUM per split, predict.DriftCharts) are computed
// from the points exactly as from the records: same points, same order.
// An activation stores its chart's points with its flags; a chart whose
// stored points are missing or against another calibration is drawn again
// from the records by the next write that changes it. RecheckDrift draws
// every stored chart again from the records and compares.

// pointColumns are drift_points' columns, in the order storePoints writes them.
var pointColumns = []string{"site", "drift_group", "coupon_id", "calibration_id", "welded_on", "coupon_mark",
	"procedure_id", "welder_id", "power_source_id", "filler_lot", "residual", "sd"}

// chartStored reports whether chart key's stored points are against dc.
func (dc driftCal) chartStored(ctx context.Context, q querier, site, key string) (bool, error) {
	var ok bool
	err := q.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM drift_charts WHERE site = $1 AND drift_group = $2 AND calibration_id = $3)`,
		site, key, dc.id).Scan(&ok)
	if err != nil {
		return false, fmt.Errorf("drift chart %s: %w", key, err)
	}
	return ok, nil
}

// readChart reads chart key's points as stored when they are against dc,
// else draws them from the records (leaving the coupons dc was fitted to
// out: through calibration_fitted when stored, else derived in memory).
// It writes nothing.
func (dc driftCal) readChart(ctx context.Context, q querier, site, key string, g CalibrationGroup) ([]driftPoint, error) {
	ok, err := dc.chartStored(ctx, q, site, key)
	if err != nil {
		return nil, err
	}
	if ok {
		return storedPoints(ctx, q, site, key)
	}
	if ok, err = fittedStored(ctx, q, site, dc.id); err != nil {
		return nil, err
	}
	if !ok {
		ids, err := derivedFitted(ctx, q, site, dc.id)
		if err != nil {
			return nil, err
		}
		dc.fitted = make(map[uuid.UUID]bool, len(ids))
		for _, id := range ids {
			dc.fitted[id] = true
		}
	}
	return dc.readDriftPoints(ctx, q, g, driftCoupons, site)
}

// chartState reads, in one statement, the calibration in use for group g
// and family (dc.id uuid.Nil: none) and whether chart key's stored points
// are against it.
func chartState(ctx context.Context, q querier, site, family string, g CalibrationGroup, key string) (dc driftCal, stored bool, err error) {
	g = g.canonical()
	err = q.QueryRow(ctx, `SELECT c.id, c.model, c.fit, c.arc_length_mm,
			EXISTS (SELECT 1 FROM drift_charts d WHERE d.site = $1 AND d.drift_group = $7 AND d.calibration_id = c.id)
		FROM (`+latestEvent+`) e JOIN calibrations c ON c.site = $1 AND c.id = e.calibration_id
		WHERE e.action = 'activate'`, site, family, g.Process, g.WireDiameterMM, g.ShieldingGas, g.JointType, key).
		Scan(&dc.id, &dc.model, &dc.fit, &dc.arc, &stored)
	if errors.Is(err, pgx.ErrNoRows) {
		return driftCal{}, false, nil
	}
	if err != nil {
		return dc, false, fmt.Errorf("drift chart %s: %w", key, err)
	}
	return dc, stored, nil
}

// updateChart brings chart key's stored points up to date in tx, which
// holds the chart's lock, and returns them in welding order: only the
// points of coupons judged again when the stored points are against dc
// (stored), else every point drawn from the records (coupons nil asks for
// that).
func (dc driftCal) updateChart(ctx context.Context, tx pgx.Tx, site, key string, g CalibrationGroup, coupons []uuid.UUID, stored bool) ([]driftPoint, error) {
	if coupons == nil || !stored {
		if err := ensureFitted(ctx, tx, site, dc.id); err != nil {
			return nil, err
		}
		pts, err := dc.readDriftPoints(ctx, tx, g, driftCoupons, site)
		if err != nil {
			return nil, err
		}
		return pts, storeChart(ctx, tx, site, key, dc.id, pts)
	}
	if err := queueExec(ctx, tx, `DELETE FROM drift_points WHERE site = $1 AND drift_group = $2 AND coupon_id = ANY($3)`, site, key, coupons); err != nil {
		return nil, fmt.Errorf("drift points: %w", err)
	}
	fresh, err := dc.readDriftPoints(ctx, tx, g, driftCouponsOf, site, coupons)
	if err != nil {
		return nil, err
	}
	if err := storePoints(ctx, tx, site, key, dc.id, fresh); err != nil {
		return nil, err
	}
	return storedPoints(ctx, tx, site, key)
}

// storedPoints reads chart key's points in welding order (ties by coupon id).
func storedPoints(ctx context.Context, q querier, site, key string) ([]driftPoint, error) {
	rows, err := q.Query(ctx, `SELECT coupon_id, coupon_mark, procedure_id, welded_on, welder_id, power_source_id, filler_lot,
			residual, sd
		FROM drift_points WHERE site = $1 AND drift_group = $2 ORDER BY welded_on, coupon_id`, site, key)
	if err != nil {
		return nil, fmt.Errorf("drift points: %w", err)
	}
	var pts []driftPoint
	var p driftPoint
	r := &p.row
	_, err = pgx.ForEachRow(rows, []any{&r.ID, &r.CouponMark, &r.ProcedureID, &r.WeldedOn, &r.WelderID, &r.PowerSourceID,
		&r.FillerLot, &p.res, &p.sd}, func() error {
		p.ok = true
		pts = append(pts, p)
		p.row.ProcedureID = nil
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("drift points: %w", err)
	}
	return pts, nil
}

// storeChart replaces chart key's stored points by pts, against calibration calID.
func storeChart(ctx context.Context, tx pgx.Tx, site, key string, calID uuid.UUID, pts []driftPoint) error {
	if err := clearChart(ctx, tx, site, key); err != nil {
		return err
	}
	if err := storePoints(ctx, tx, site, key, calID, pts); err != nil {
		return err
	}
	if _, err := tx.Exec(ctx, `INSERT INTO drift_charts (site, drift_group, calibration_id) VALUES ($1, $2, $3)`, site, key, calID); err != nil {
		return fmt.Errorf("drift chart %s: %w", key, err)
	}
	return nil
}

// clearChart removes chart key's stored points (no calibration in use, or
// before they are drawn again).
func clearChart(ctx context.Context, tx pgx.Tx, site, key string) error {
	for _, t := range []string{"drift_points", "drift_charts"} {
		if _, err := tx.Exec(ctx, `DELETE FROM `+t+` WHERE site = $1 AND drift_group = $2`, site, key); err != nil {
			return fmt.Errorf("clear drift chart %s: %w", key, err)
		}
	}
	return nil
}

// storePoints adds pts to chart key's stored points: a few (a write's own
// coupons) by INSERTs that leave with the next statement, more by COPY.
func storePoints(ctx context.Context, tx pgx.Tx, site, key string, calID uuid.UUID, pts []driftPoint) error {
	row := func(i int) []any {
		p := &pts[i]
		c := &p.row
		return []any{site, key, c.ID, calID, c.WeldedOn, c.CouponMark, c.ProcedureID, c.WelderID, c.PowerSourceID,
			c.FillerLot, p.res, p.sd}
	}
	if len(pts) <= 8 {
		for i := range pts {
			if err := queueExec(ctx, tx, insertPoint, row(i)...); err != nil {
				return fmt.Errorf("drift points: %w", err)
			}
		}
		return nil
	}
	_, err := tx.CopyFrom(ctx, pgx.Identifier{"drift_points"}, pointColumns, pgx.CopyFromSlice(len(pts), func(i int) ([]any, error) {
		return row(i), nil
	}))
	if err != nil {
		return fmt.Errorf("drift points: %w", mapError(err))
	}
	return nil
}

// insertPoint inserts one row of drift_points (pointColumns' order).
var insertPoint = `INSERT INTO drift_points (` + strings.Join(pointColumns, ", ") + `) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12)`
