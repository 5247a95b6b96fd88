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
	// Inherited names the group fields the coupon leaves out and takes from
	// its procedure (else its qualification record): process always, the
	// shielding gas when the coupon records none.
	Inherited []string
}

// CouponForModel reads a coupon with its group and current sections. The
// process is the procedure's, else the qualification record's.
func (s *Store) CouponForModel(ctx context.Context, site string, id uuid.UUID) (CouponModelData, error) {
	c, err := s.Coupon(ctx, site, id, 0)
	if err != nil {
		return CouponModelData{}, err
	}
	d := CouponModelData{Coupon: c, Group: CalibrationGroup{WireDiameterMM: c.WireDiameterMM,
		ShieldingGas: c.ShieldingGas, JointType: c.JointType}}
	var gas string
	err = s.pool.QueryRow(ctx, `
		SELECT coalesce(p.process, r.process, ''), coalesce(p.shielding_gas, r.shielding_gas, '')
		FROM (SELECT 1) one
		LEFT JOIN LATERAL (SELECT process, shielding_gas FROM procedures WHERE site = $1 AND id = $2 ORDER BY revision DESC LIMIT 1) p ON true
		LEFT JOIN LATERAL (SELECT process, shielding_gas FROM qualification_records WHERE site = $1 AND id = $3 ORDER BY revision DESC LIMIT 1) r ON true`,
		site, c.ProcedureID, c.QualificationRecordID).Scan(&d.Group.Process, &gas)
	if err != nil {
		return d, fmt.Errorf("db: coupon %s process: %w", id, err)
	}
	d.Inherited = []string{"process"}
	if d.Group.ShieldingGas == "" && gas != "" {
		d.Group.ShieldingGas = gas
		d.Inherited = append(d.Inherited, "shielding_gas")
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
