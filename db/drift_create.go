package db

import (
	"context"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// newCouponDrift is couponDrift for coupon c, just created under its
// procedure's shared flag lock: it rewrites only the charts on which the
// new coupon has a point, under their locks, and leaves the others alone.
//
// A chart the new coupon has no point on keeps its points (a new coupon has
// none stored, and a create changes no other coupon), so its flags, drawn
// from the points, stay what they are. Rewriting them anyway took every
// chart lock of the coupon's group and held it to the commit, so that all
// creates in a calibrated group ran one at a time. A new coupon has no
// sections yet, so it has no point on a penetration chart (driftResidual),
// and none on a melting chart without its wire feed speed and CTWD; only a
// melting chart is looked at, and only then. The calibration in use cannot
// change before the create commits: an activation takes the exclusive flag
// lock of every procedure of its process before it commits, and the create
// holds its procedure's shared one. A chart not stored yet stays so until
// a write that changes it draws it (as RecheckDrift allows).
func newCouponDrift(ctx context.Context, tx pgx.Tx, now time.Time, c Coupon) error {
	if c.WireFeedSpeedMPerMin == nil || c.CTWDMM == nil {
		return nil
	}
	ids := []uuid.UUID{c.ID}
	groups, err := couponGroups(ctx, tx, c.Site, ids)
	if err != nil {
		return err
	}
	moved := map[string]CalibrationGroup{}
	for _, g := range groups {
		g = g.canonical()
		k := driftKey("melting", g)
		dc, _, err := chartState(ctx, tx, c.Site, "melting", g, k)
		if err != nil {
			return err
		}
		if dc.id == uuid.Nil {
			continue
		}
		pts, err := dc.readDriftPoints(ctx, tx, g, driftCouponsOf, c.Site, ids)
		if err != nil {
			return err
		}
		if len(pts) > 0 {
			moved[k] = g
		}
	}
	if len(moved) == 0 {
		return nil
	}
	return recomputeCharts(ctx, tx, now, c.Site, moved, ids)
}
