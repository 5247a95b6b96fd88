package dbtest

import (
	"context"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5/pgxpool"

	"etchlog/db"
)

// RawCoupon is the write the coupon-create benchmarks compare against: a
// plain pgx INSERT of c's columns into coupons under a new id, in one
// transaction of its own, with no link check, mark, log leaf or flags. site
// should be one the benchmark's store does not write to, so the rows stay
// out of its marks and log.
func RawCoupon(ctx context.Context, pool *pgxpool.Pool, site, mark string, c db.CouponData) error {
	tx, err := pool.Begin(ctx)
	if err != nil {
		return err
	}
	defer tx.Rollback(ctx) //nolint:errcheck // no-op after Commit
	if _, err := tx.Exec(ctx, `
		INSERT INTO coupons (site, id, revision, created_at, created_by, reason, voided, procedure_id,
			qualification_record_id, coupon_mark, welder_id, power_source_id, filler_lot, welded_on,
			joint_type, thickness_mm, pass_number, current_a, voltage_v, travel_speed_mm_s,
			wire_feed_speed_m_min, ctwd_mm, wire_diameter_mm, shielding_gas, polarity, position,
			preheat_c, interpass_c)
		VALUES ($1, $2, 1, now(), 'bench', '', false, $3, NULL, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13,
			$14, $15, $16, $17, $18, $19, $20, $21, $22)`,
		site, uuid.New(), c.ProcedureID, mark, c.WelderID, c.PowerSourceID, c.FillerLot,
		c.WeldedOn, c.JointType, c.ThicknessMM, c.PassNumber, c.CurrentA, c.VoltageV, c.TravelSpeedMMPerS,
		c.WireFeedSpeedMPerMin, c.CTWDMM, c.WireDiameterMM, c.ShieldingGas, c.Polarity, c.Position,
		c.PreheatC, c.InterpassC); err != nil {
		return err
	}
	return tx.Commit(ctx)
}
