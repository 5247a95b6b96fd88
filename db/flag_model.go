package db

import (
	"context"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// Model flags compare coupons with the Jackson calibration in use for the
// coupon's group (process of its procedure, wire diameter, shielding gas,
// joint type): the latest activated, of either form.
// Production records carry no wire, gas or joint type, so they get no model
// flag beyond heat input.

// penetrationCheck returns the check of the penetration calibration in use
// for group g (the latest activation of either Jackson form, unless since
// deactivated) with the procedure's required minimum penetration, or nil
// when none is in use.
func penetrationCheck(ctx context.Context, q querier, site string, g CalibrationGroup, minMM *float64) (*predict.PenetrationCheck, error) {
	id, err := activeOf(ctx, q, site, CalibrationJacksonFixed.Family(), g)
	if err != nil || id == uuid.Nil {
		return nil, err
	}
	var level float64
	var fit CalibrationFit
	if err := q.QueryRow(ctx, `SELECT level, fit FROM calibrations WHERE site = $1 AND id = $2`, site, id).Scan(&level, &fit); err != nil {
		return nil, fmt.Errorf("active calibration: %w", err)
	}
	if fit.Penetration == nil {
		return nil, nil
	}
	return &predict.PenetrationCheck{Fit: *fit.Penetration, Level: level, Label: id.String(), MinPenetrationMM: minMM}, nil
}

// couponSections returns the current, non-voided sections (label and
// penetration in mm) of a coupon, in measurement creation order.
func couponSections(ctx context.Context, q querier, site string, couponID uuid.UUID) ([]predict.Section, error) {
	rows, _ := q.Query(ctx, sectionsSQL, site, couponID)
	secs, err := readSections(rows)
	if err != nil {
		return nil, fmt.Errorf("coupon %s sections: %w", couponID, err)
	}
	return secs, nil
}

// sectionsSQL reads the current, non-voided sections of coupon $2 at site $1.
const sectionsSQL = `SELECT section, penetration_mm FROM (
			SELECT DISTINCT ON (id) id, voided, section, penetration_mm
			FROM measurements WHERE site = $1 AND coupon_id = $2 ORDER BY id, revision DESC) cur
		WHERE NOT voided ORDER BY id`

// readSections reads the rows of sectionsSQL.
func readSections(rows pgx.Rows) ([]predict.Section, error) {
	return pgx.CollectRows(rows, func(r pgx.CollectableRow) (predict.Section, error) {
		var s predict.Section
		return s, r.Scan(&s.Label, &s.PenetrationMM)
	})
}

// couponRequirements lists the minimum penetrations that apply to a
// coupon's sections: its procedure's and its qualification record's
// acceptance criterion, each named as the document and revision that state it.
func couponRequirements(ctx context.Context, q querier, site string, c Coupon, p Procedure) ([]predict.Requirement, error) {
	if c.QualificationRecordID == nil {
		return requirementsOf(p, nil), nil
	}
	r, err := getRecord[QualificationRecord](ctx, q, qualificationRecords, site, *c.QualificationRecordID, 0)
	if err != nil {
		return nil, err
	}
	return requirementsOf(p, &r), nil
}

// requirementsOf is couponRequirements over the rows already read: the
// procedure's minimum, and r's (the coupon's qualification record, nil when
// it names none) unless r is voided.
func requirementsOf(p Procedure, r *QualificationRecord) []predict.Requirement {
	var reqs []predict.Requirement
	if p.MinPenetrationMM != nil {
		reqs = append(reqs, predict.Requirement{MinPenetrationMM: *p.MinPenetrationMM,
			Source: fmt.Sprintf("%s rev %d", p.Code, p.Revision), Verb: "requires"})
	}
	if r != nil && r.MinPenetrationMM != nil && !r.Voided {
		reqs = append(reqs, predict.Requirement{MinPenetrationMM: *r.MinPenetrationMM,
			Source: fmt.Sprintf("%s rev %d", r.RecordNumber, r.Revision), Verb: "states as its acceptance criterion"})
	}
	return reqs
}

// couponSubject builds the evaluation subject of a coupon on procedure p:
// its sections with the requirements they answer to, and its model check
// when a calibration is active for its group.
func couponSubject(ctx context.Context, q querier, site string, c Coupon, p Procedure) (*subject, error) {
	c.inherit(procedureDefaults(p)) // a field the coupon leaves out was welded as its procedure says
	secs, err := couponSections(ctx, q, site, c.ID)
	if err != nil {
		return nil, err
	}
	reqs, err := couponRequirements(ctx, q, site, c, p)
	if err != nil {
		return nil, err
	}
	check, err := penetrationCheck(ctx, q, site, couponGroup(c), p.MinPenetrationMM)
	if err != nil {
		return nil, err
	}
	return newCouponSubject(c, secs, reqs, check), nil
}

// couponGroup is the calibration group of coupon c, whose left-out fields
// its procedure has filled (inherit).
func couponGroup(c Coupon) CalibrationGroup {
	return CalibrationGroup{Process: c.Process, WireDiameterMM: *c.WireDiameterMM, ShieldingGas: c.ShieldingGas, JointType: c.JointType}
}

// newCouponSubject is the subject of coupon c (its left-out fields filled
// from its procedure) with its current sections, the requirements they
// answer to and its model check (nil: no calibration in use).
func newCouponSubject(c Coupon, secs []predict.Section, reqs []predict.Requirement, check *predict.PenetrationCheck) *subject {
	s := &subject{kind: SubjectCoupon, id: c.ID, at: c.WeldedOn.Time, obs: couponObservation(c.CouponData), sections: secs, reqs: reqs}
	if check == nil {
		return s
	}
	pens := make([]float64, len(s.sections))
	for i, sec := range s.sections {
		pens[i] = sec.PenetrationMM
	}
	s.model, s.measuredMM = check, predict.SectionMean(pens)
	if iv, err := check.Fit.Predict(c.CurrentA, c.VoltageV, c.TravelSpeedMMPerS, check.Level); err == nil {
		s.predicted = &iv.MedianMM
	}
	return s
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
	rows, _ := tx.Query(ctx, `SELECT cur.id, p.process, coalesce(cur.wire_diameter_mm, p.wire_diameter_mm),
			coalesce(nullif(cur.shielding_gas, ''), p.shielding_gas), cur.joint_type FROM (
			SELECT DISTINCT ON (id) id, voided, procedure_id, wire_diameter_mm, shielding_gas, joint_type
			FROM coupons WHERE site = $1 ORDER BY id, revision DESC) cur
		JOIN LATERAL (SELECT process, wire_diameter_mm, shielding_gas FROM procedures p WHERE p.site = $1 AND p.id = cur.procedure_id
			ORDER BY revision DESC LIMIT 1) p ON true
		WHERE NOT cur.voided AND p.process = $2 AND cur.joint_type = $3`, site, g.Process, g.JointType)
	type member struct {
		id         uuid.UUID
		process    string
		wire       float64
		gas, joint string
	}
	ms, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (member, error) {
		var m member
		return m, r.Scan(&m.id, &m.process, &m.wire, &m.gas, &m.joint)
	})
	if err != nil {
		return fmt.Errorf("coupons of calibration group: %w", err)
	}
	for _, m := range ms { // nominal wire size and gas composition are compared here, not in SQL
		if !g.has(m.process, m.wire, m.gas, m.joint) {
			continue
		}
		if _, err := recomputeCoupon(ctx, tx, now, site, m.id); err != nil {
			return err
		}
	}
	return nil
}
