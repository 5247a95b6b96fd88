package db

import (
	"bytes"
	"context"
	"fmt"
	"slices"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// DriftCheck is the outcome of RecheckDrift: how many stored charts and
// fitted sets were compared with their derivation from the records, and
// every difference found, in words.
type DriftCheck struct {
	Charts     int      `json:"charts"`
	Points     int      `json:"points"`
	FittedSets int      `json:"fitted_sets"`
	Problems   []string `json:"problems"`
}

// OK reports whether every stored chart and fitted set equals its derivation.
func (c DriftCheck) OK() bool { return len(c.Problems) == 0 }

// RecheckDrift derives the site's stored drift data again from the records,
// without reading the stored data to do it, and compares, in one snapshot:
//   - every stored fitted set (calibration_fitted) with the coupons its
//     calibration's selection gives as of the fit (or its coupon_ids);
//   - every stored chart (drift_charts, drift_points) with the chart of the
//     calibration in use drawn from the records, point by point (coupon,
//     welding order, residual and SD bit for bit, splits), with the fitted
//     coupons derived as above;
//   - that a chart stored against a calibration is the one in use.
//
// A chart of a calibration in use that is not stored yet (drawn by the next
// write that changes it) is not a difference.
func (s *Store) RecheckDrift(ctx context.Context, site string) (DriftCheck, error) {
	c := DriftCheck{Problems: []string{}}
	tx, err := s.pool.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
	if err != nil {
		return c, fmt.Errorf("db: recheck drift: %w", err)
	}
	defer tx.Rollback(ctx) //nolint:errcheck // read only
	problem := func(format string, args ...any) { c.Problems = append(c.Problems, fmt.Sprintf(format, args...)) }
	cmp := func(a, b uuid.UUID) int { return bytes.Compare(a[:], b[:]) }

	derived := map[uuid.UUID][]uuid.UUID{} // per calibration, its fitted coupons (sorted)
	fittedOf := func(calID uuid.UUID) ([]uuid.UUID, error) {
		if ids, ok := derived[calID]; ok {
			return ids, nil
		}
		ids, err := derivedFitted(ctx, tx, site, calID)
		if err != nil {
			return nil, err
		}
		ids = slices.Clone(ids)
		slices.SortFunc(ids, cmp)
		derived[calID] = ids
		return ids, nil
	}

	rows, _ := tx.Query(ctx, `SELECT calibration_id, coupons FROM calibration_fitted_sets WHERE site = $1 ORDER BY calibration_id`, site)
	type set struct {
		id uuid.UUID
		n  int
	}
	sets, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (set, error) {
		var v set
		return v, r.Scan(&v.id, &v.n)
	})
	if err != nil {
		return c, fmt.Errorf("db: recheck drift: %w", err)
	}
	for _, st := range sets {
		c.FittedSets++
		want, err := fittedOf(st.id)
		if err != nil {
			return c, fmt.Errorf("db: recheck drift: %w", err)
		}
		rows, _ := tx.Query(ctx, `SELECT coupon_id FROM calibration_fitted WHERE site = $1 AND calibration_id = $2`, site, st.id)
		got, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
		if err != nil {
			return c, fmt.Errorf("db: recheck drift: %w", err)
		}
		slices.SortFunc(got, cmp)
		if !slices.Equal(got, want) || st.n != len(want) {
			problem("calibration %s: %d fitted coupons stored (%d counted), its selection gives %d", st.id, len(got), st.n, len(want))
		}
	}

	rows, _ = tx.Query(ctx, `SELECT drift_group, calibration_id FROM drift_charts WHERE site = $1 ORDER BY drift_group`, site)
	type chart struct {
		key   string
		calID uuid.UUID
	}
	charts, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (chart, error) {
		var v chart
		return v, r.Scan(&v.key, &v.calID)
	})
	if err != nil {
		return c, fmt.Errorf("db: recheck drift: %w", err)
	}
	var orphans int
	if err := tx.QueryRow(ctx, `SELECT count(*) FROM drift_points p WHERE site = $1
		AND NOT EXISTS (SELECT 1 FROM drift_charts c WHERE c.site = p.site AND c.drift_group = p.drift_group AND c.calibration_id = p.calibration_id)`,
		site).Scan(&orphans); err != nil {
		return c, fmt.Errorf("db: recheck drift: %w", err)
	}
	if orphans > 0 {
		problem("%d drift points belong to no stored chart", orphans)
	}
	for _, ch := range charts {
		c.Charts++
		var g CalibrationGroup
		if err := tx.QueryRow(ctx, `SELECT process, wire_diameter_mm, shielding_gas, joint_type FROM calibrations WHERE site = $1 AND id = $2`,
			site, ch.calID).Scan(&g.Process, &g.WireDiameterMM, &g.ShieldingGas, &g.JointType); err != nil {
			return c, fmt.Errorf("db: recheck drift: chart %s: %w", ch.key, err)
		}
		g = g.canonical()
		family := driftFamily(ch.key)
		if driftKey(family, g) != ch.key {
			problem("chart %s is stored against calibration %s of another group", ch.key, ch.calID)
			continue
		}
		active, err := activeOf(ctx, tx, site, family, g)
		if err != nil {
			return c, fmt.Errorf("db: recheck drift: %w", err)
		}
		if active != ch.calID {
			problem("chart %s is stored against calibration %s; in use: %s", ch.key, ch.calID, inUse(active))
			continue
		}
		dc, err := driftCalibration(ctx, tx, site, ch.calID)
		if err != nil {
			return c, fmt.Errorf("db: recheck drift: %w", err)
		}
		ids, err := fittedOf(ch.calID)
		if err != nil {
			return c, fmt.Errorf("db: recheck drift: %w", err)
		}
		dc.fitted = make(map[uuid.UUID]bool, len(ids))
		for _, id := range ids {
			dc.fitted[id] = true
		}
		want, err := dc.readDriftPoints(ctx, tx, g, driftCoupons, site)
		if err != nil {
			return c, fmt.Errorf("db: recheck drift: %w", err)
		}
		got, err := storedPoints(ctx, tx, site, ch.key)
		if err != nil {
			return c, fmt.Errorf("db: recheck drift: %w", err)
		}
		c.Points += len(got)
		if len(got) != len(want) {
			problem("chart %s: %d points stored, %d drawn from the records", ch.key, len(got), len(want))
			continue
		}
		for i := range got {
			if a, b := pointText(got[i]), pointText(want[i]); a != b {
				problem("chart %s, point %d: stored %s, drawn from the records %s", ch.key, i, a, b)
			}
		}
	}
	return c, nil
}

// pointText is what a chart reads of a point, as text (floats bit for bit).
func pointText(p driftPoint) string {
	r := p.row
	proc := "none"
	if r.ProcedureID != nil {
		proc = r.ProcedureID.String()
	}
	return fmt.Sprintf("%s %q %s %s %q %q %q %b %b", r.ID, r.CouponMark, proc, r.WeldedOn.Format("2006-01-02"),
		r.WelderID, r.PowerSourceID, r.FillerLot, p.res, p.sd)
}
