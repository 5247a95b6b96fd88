package db

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// Model flags compare coupons with the site's active Jackson calibration for
// the coupon's group (process of its procedure, wire diameter, shielding gas,
// joint type; the free-exponent fit when one is active, else the fixed one).
// Production records carry no wire, gas or joint type, so they get no model
// flag beyond heat input.

// penetrationCheck returns the active calibration check for group g with the
// procedure's required minimum penetration, or nil when none is active.
func penetrationCheck(ctx context.Context, q querier, site string, g CalibrationGroup, minMM *float64) (*predict.PenetrationCheck, error) {
	g = g.canonical()
	for _, model := range []CalibrationModel{CalibrationJacksonFree, CalibrationJacksonFixed} {
		var id uuid.UUID
		var level float64
		var fit CalibrationFit
		err := q.QueryRow(ctx, `SELECT c.id, c.level, c.fit FROM calibrations c
			WHERE c.site = $1 AND c.id = (
				SELECT calibration_id FROM calibration_activations
				WHERE site = $1 AND model = $2 AND process = $3 AND wire_diameter_mm = $4
				  AND shielding_gas = $5 AND joint_type = $6
				ORDER BY activated_at DESC, id DESC LIMIT 1)`,
			site, model, g.Process, g.WireDiameterMM, g.ShieldingGas, g.JointType).Scan(&id, &level, &fit)
		if errors.Is(err, pgx.ErrNoRows) {
			continue
		}
		if err != nil {
			return nil, fmt.Errorf("active calibration: %w", err)
		}
		if fit.Penetration == nil {
			continue
		}
		return &predict.PenetrationCheck{Fit: *fit.Penetration, Level: level, Label: id.String(), MinPenetrationMM: minMM}, nil
	}
	return nil, nil
}

// couponSections returns the current, non-voided section penetrations (mm)
// of a coupon, in measurement creation order.
func couponSections(ctx context.Context, q querier, site string, couponID uuid.UUID) ([]float64, error) {
	rows, _ := q.Query(ctx, `SELECT penetration_mm FROM (
			SELECT DISTINCT ON (id) id, voided, penetration_mm
			FROM measurements WHERE site = $1 AND coupon_id = $2 ORDER BY id, revision DESC) cur
		WHERE NOT voided ORDER BY id`, site, couponID)
	pens, err := pgx.CollectRows(rows, pgx.RowTo[float64])
	if err != nil {
		return nil, fmt.Errorf("coupon %s sections: %w", couponID, err)
	}
	return pens, nil
}

// couponSubject builds the evaluation subject of a coupon on procedure p,
// with its model check when a calibration is active for its group.
func couponSubject(ctx context.Context, q querier, site string, c Coupon, p Procedure) (*subject, error) {
	s := &subject{kind: SubjectCoupon, id: c.ID, at: c.WeldedOn.Time, obs: couponObservation(c.CouponData)}
	g := CalibrationGroup{Process: p.Process, WireDiameterMM: c.WireDiameterMM, ShieldingGas: c.ShieldingGas, JointType: c.JointType}
	check, err := penetrationCheck(ctx, q, site, g, p.MinPenetrationMM)
	if err != nil || check == nil {
		return s, err
	}
	pens, err := couponSections(ctx, q, site, c.ID)
	if err != nil {
		return nil, err
	}
	s.model, s.measuredMM = check, predict.SectionMean(pens)
	return s, nil
}

// measurementCoupon returns the coupon a measurement belongs to.
func measurementCoupon(ctx context.Context, q querier, site string, id uuid.UUID) (uuid.UUID, error) {
	var c uuid.UUID
	err := q.QueryRow(ctx, `SELECT coupon_id FROM measurements WHERE site = $1 AND id = $2 ORDER BY revision DESC LIMIT 1`, site, id).Scan(&c)
	return c, err
}

// recomputeGroup rewrites the flags of every current coupon in calibration
// group g. Call it in the transaction that changes the group's active
// calibration (ActivateCalibration), so model flags are never stale.
func recomputeGroup(ctx context.Context, tx pgx.Tx, now time.Time, site string, g CalibrationGroup) error {
	g = g.canonical()
	if err := lockProcess(ctx, tx, site, g.Process); err != nil {
		return err
	}
	rows, _ := tx.Query(ctx, `SELECT cur.id FROM (
			SELECT DISTINCT ON (id) id, voided, procedure_id, wire_diameter_mm, shielding_gas, joint_type
			FROM coupons WHERE site = $1 ORDER BY id, revision DESC) cur
		JOIN LATERAL (SELECT process FROM procedures p WHERE p.site = $1 AND p.id = cur.procedure_id
			ORDER BY revision DESC LIMIT 1) p ON true
		WHERE NOT cur.voided AND p.process = $2 AND round(cur.wire_diameter_mm::numeric, 3) = round($3::numeric, 3)
		  AND cur.shielding_gas = $4 AND cur.joint_type = $5`, site, g.Process, g.WireDiameterMM, g.ShieldingGas, g.JointType)
	ids, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
	if err != nil {
		return fmt.Errorf("coupons of calibration group: %w", err)
	}
	for _, id := range ids {
		if _, err := recomputeCoupon(ctx, tx, now, site, id); err != nil {
			return err
		}
	}
	return nil
}
