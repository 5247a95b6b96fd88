package db

import (
	"context"
	"fmt"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// MeasurementData is what an inspector measured on one macro-etched section of a
// coupon. Lengths in mm, area in mm². Reinforcement may be negative (underfill).
type MeasurementData struct {
	CouponID        uuid.UUID `db:"coupon_id" json:"coupon_id"`
	Section         string    `db:"section" json:"section" validate:"required,max=32"`
	PenetrationMM   float64   `db:"penetration_mm" json:"penetration_mm" validate:"quantity"`
	BeadWidthMM     float64   `db:"bead_width_mm" json:"bead_width_mm" validate:"required,quantity"`
	ReinforcementMM float64   `db:"reinforcement_mm" json:"reinforcement_mm" validate:"quantity"`
	Leg1MM          *float64  `db:"leg1_mm" json:"leg1_mm,omitempty" validate:"omitempty,quantity"`
	Leg2MM          *float64  `db:"leg2_mm" json:"leg2_mm,omitempty" validate:"omitempty,quantity"`
	ThroatMM        *float64  `db:"throat_mm" json:"throat_mm,omitempty" validate:"omitempty,quantity"`
	FusedAreaMM2    *float64  `db:"fused_area_mm2" json:"fused_area_mm2,omitempty" validate:"omitempty,quantity"`
	Acceptance      string    `db:"acceptance" json:"acceptance" validate:"required,enum"`
	Inspector       string    `db:"inspector" json:"inspector" validate:"required,max=64"`
	Remark          string    `db:"remark" json:"remark" validate:"max=2000"`
}

// Measurement is one stored revision of a macro-etch measurement.
type Measurement struct {
	Meta
	MeasurementData
}

var measurements = table{name: "measurements", entity: "measurement", fields: recordColumns(MeasurementData{})}

// checkCoupon verifies that the coupon exists and is not voided, and that
// the section's penetration is not deeper than the coupon's base metal is
// thick (a typing error, not a weld).
func (d MeasurementData) checkCoupon(ctx context.Context, site string) func(pgx.Tx) error {
	return func(tx pgx.Tx) error {
		if err := exists(ctx, tx, coupons, site, d.CouponID, "coupon_id"); err != nil {
			return err
		}
		c, err := getRecord[Coupon](ctx, tx, coupons, site, d.CouponID, 0)
		if err != nil {
			return err
		}
		return d.fitsCoupon(c.CouponData)
	}
}

// fitsCoupon refuses a section whose penetration is deeper than its
// coupon's base metal is thick: a typing error, not a weld.
func (d MeasurementData) fitsCoupon(c CouponData) error {
	if d.PenetrationMM > c.ThicknessMM {
		return &FieldError{Field: "penetration_mm", Reason: fmt.Sprintf(
			"penetration %g mm is greater than the coupon's base-metal thickness %g mm (thickness_mm of coupon %s); check both values",
			d.PenetrationMM, c.ThicknessMM, c.CouponMark)}
	}
	return nil
}

// CreateMeasurement stores revision 1 of a new measurement on an existing
// coupon and rewrites the coupon's flags.
func (s *Store) CreateMeasurement(ctx context.Context, a Actor, d MeasurementData) (Measurement, error) {
	m, err := s.newRecord(a)
	if err != nil {
		return Measurement{}, err
	}
	if err := s.write(ctx, "create measurement",
		d.checkCoupon(ctx, a.Site),
		measurements.writeRevision(ctx, m, recordValues(d)),
		s.logged(ctx, measurements, m, actionCreate),
		measuredCouponFlags(ctx, m),
	); err != nil {
		return Measurement{}, err
	}
	return Measurement{m, d}, nil
}

// CorrectMeasurement stores the next revision of a measurement and rewrites
// the coupon's flags.
func (s *Store) CorrectMeasurement(ctx context.Context, a Actor, id uuid.UUID, ch Change, d MeasurementData) (Measurement, error) {
	m := s.nextRevision(a, id, ch, false)
	if err := s.write(ctx, "correct measurement "+id.String(),
		measurements.baseIs(ctx, a.Site, id, ch),
		d.checkCoupon(ctx, a.Site),
		measurements.writeRevision(ctx, m, recordValues(d)),
		s.logged(ctx, measurements, m, actionCorrect),
		measuredCouponFlags(ctx, m),
	); err != nil {
		return Measurement{}, err
	}
	return Measurement{m, d}, nil
}

// VoidMeasurement voids a measurement with a reason and rewrites the
// coupon's flags without it.
func (s *Store) VoidMeasurement(ctx context.Context, a Actor, id uuid.UUID, ch Change) (Measurement, error) {
	m := s.nextRevision(a, id, ch, true)
	if err := s.write(ctx, "void measurement "+id.String(),
		measurements.baseIs(ctx, a.Site, id, ch),
		measurements.voidLatest(ctx, m),
		s.logged(ctx, measurements, m, actionVoid),
		measuredCouponFlags(ctx, m),
	); err != nil {
		return Measurement{}, err
	}
	return s.Measurement(ctx, a.Site, id, 0)
}

// Measurement reads the latest revision of a measurement, or revision rev when rev > 0.
func (s *Store) Measurement(ctx context.Context, site string, id uuid.UUID, rev int) (Measurement, error) {
	return readOne[Measurement](ctx, s, measurements, site, id, rev)
}

// MeasurementRevisions lists every revision of a measurement, oldest first.
func (s *Store) MeasurementRevisions(ctx context.Context, site string, id uuid.UUID) ([]Measurement, error) {
	return revisions[Measurement](ctx, s, measurements, site, id)
}

// MeasurementFilter selects measurements in a list.
type MeasurementFilter struct {
	CouponID      *uuid.UUID
	Acceptance    string
	IncludeVoided bool
}

// Measurements lists current measurements after the cursor, in log order
// through the sections list's key (section_list.go).
func (s *Store) Measurements(ctx context.Context, site string, mf MeasurementFilter, cursor string, limit int) (Page[Measurement], error) {
	return s.listSections(ctx, site, mf, cursor, limit)
}
