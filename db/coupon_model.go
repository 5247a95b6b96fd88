package db

import (
	"context"
	"fmt"

	"github.com/google/uuid"
)

// CouponModelData is what the model view of one coupon needs: the coupon's
// latest revision, its calibration group and its current, non-voided
// sections' penetrations (mm) and fused areas (mm², where measured), in
// measurement creation order.
type CouponModelData struct {
	Coupon         Coupon
	Group          CalibrationGroup
	PenetrationsMM []float64
	FusedAreasMM2  []float64
	// Inherited names the fields the coupon leaves out and takes from its
	// procedure (else its qualification record): process always, wire
	// diameter, shielding gas and polarity when the coupon records none.
	Inherited []string
}

// CouponForModel reads a coupon with its group and current sections. The
// process is the procedure's, else the qualification record's.
func (s *Store) CouponForModel(ctx context.Context, site string, id uuid.UUID) (CouponModelData, error) {
	c, err := s.Coupon(ctx, site, id, 0)
	if err != nil {
		return CouponModelData{}, err
	}
	// s.Coupon has filled what the coupon leaves out from its procedure (else
	// its qualification record): the group is the coupon's effective one.
	d := CouponModelData{Coupon: c, Group: CalibrationGroup{Process: c.Process,
		ShieldingGas: c.ShieldingGas, JointType: c.JointType}, Inherited: c.Inherited}
	if c.WireDiameterMM != nil {
		d.Group.WireDiameterMM = *c.WireDiameterMM
	}
	d.Group = d.Group.canonical()
	rows, err := s.pool.Query(ctx, `
		SELECT penetration_mm, fused_area_mm2 FROM (
			SELECT DISTINCT ON (id) id, voided, penetration_mm, fused_area_mm2
			FROM measurements WHERE site = $1 AND coupon_id = $2 ORDER BY id, revision DESC) cur
		WHERE NOT voided ORDER BY id`, site, id)
	if err != nil {
		return d, fmt.Errorf("db: coupon %s sections: %w", id, err)
	}
	defer rows.Close()
	for rows.Next() {
		var pen float64
		var area *float64
		if err := rows.Scan(&pen, &area); err != nil {
			return d, err
		}
		d.PenetrationsMM = append(d.PenetrationsMM, pen)
		if area != nil {
			d.FusedAreasMM2 = append(d.FusedAreasMM2, *area)
		}
	}
	return d, rows.Err()
}
