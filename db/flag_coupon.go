package db

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// A coupon's flags derive from its latest revision, its procedure's latest
// revision, the procedure's latest ranges (and whether they are stale), the
// coupon's current sections, its qualification record and the calibration
// in use for its group. recomputeCoupon reads all of them in one round trip:
// each statement names the coupon and finds the rest by subquery, and all of
// them run after the shared flag lock of the coupon's procedures is held, as
// separate statements in the order below, each with its own snapshot. Only
// the calibration is chosen in Go, because the group's wire and gas are
// canonicalised there (CalibrationGroup.canonical).

// latestCoupon is the subquery of coupon $2's latest revision at site $1.
const latestCoupon = `(SELECT %s FROM coupons WHERE site = $1 AND id = $2 ORDER BY revision DESC LIMIT 1)`

// groupActivation is the latest activation event of one calibration group
// (wire and gas) among those of the coupon's process and joint type.
type groupActivation struct {
	wireMM      float64
	gas         string
	calibration uuid.UUID
	action      string
	level       float64
	fit         []byte
}

// couponInputs is what recomputeCoupon reads.
type couponInputs struct {
	coupon      *Coupon
	procedure   *Procedure
	ranges      *ProcedureRanges
	stale       string
	sections    []predict.Section
	record      *QualificationRecord
	activations []groupActivation
}

// optionalRow reads at most one row into a T (nil when there is none).
func optionalRow[T any](dst **T) func(pgx.Rows) error {
	return func(rows pgx.Rows) error {
		v, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[T])
		switch {
		case rows.Err() != nil: // the statement's own error is reported
			return nil
		case errors.Is(err, pgx.ErrNoRows):
			return nil
		case err != nil:
			return err
		}
		*dst = &v
		return nil
	}
}

// recomputeCoupon rewrites one coupon's flags from its latest revision: none
// when it is voided, names no procedure, or its procedure is voided.
func recomputeCoupon(ctx context.Context, tx pgx.Tx, now time.Time, site string, id uuid.UUID) (int, error) {
	return recomputeCouponOf(ctx, tx, now, site, id, nil, nil)
}

// writtenCouponFlags is the step that rewrites the flags of coupon m.ID
// after the write of revision m with values c, which is its latest: the
// write holds the record (a new one, or a correction's record lock), so no
// other revision can come between. Its values are taken as written instead
// of read back; a new coupon has no flags to clear and no sections yet (a
// section must name a coupon that is there, and this one is not until the
// write commits).
func writtenCouponFlags(ctx context.Context, m Meta, c CouponData) step {
	return func(tx pgx.Tx) error {
		c.WeldedOn = DateOf(c.WeldedOn.Time) // as the date column keeps it
		var calibrated bool
		if _, err := recomputeCouponOf(ctx, tx, m.CreatedAt, m.Site, m.ID, &Coupon{Meta: m, CouponData: c}, &calibrated); err != nil {
			return err
		}
		if !calibrated { // no calibration of the process was ever chosen: no drift chart to redraw
			return nil
		}
		return couponDrift(ctx, tx, m.CreatedAt, m.Site, m.ID)
	}
}

// recomputeCouponOf is recomputeCoupon; written, when not nil, is the
// coupon's latest revision as just written in this transaction. When
// calibrated is not nil it is set, in the same round trip, to whether any
// calibration of the procedure's process was ever activated or deactivated
// at the site (the drift charts a coupon write may change need one).
func recomputeCouponOf(ctx context.Context, tx pgx.Tx, now time.Time, site string, id uuid.UUID, written *Coupon, calibrated *bool) (int, error) {
	var in couponInputs
	// The procedure and joint type are the latest revision's: read by
	// subquery, or given when the revision was just written.
	lock, procID, joint, args := lockCouponProcedures, fmt.Sprintf(latestCoupon, "procedure_id"), fmt.Sprintf(latestCoupon, "joint_type"), []any{site, id}
	fresh := written != nil && written.Revision == 1
	if written != nil {
		procID, joint, args = "$2::uuid", "$3::text", []any{site, written.ProcedureID, written.JointType}
	}
	var lockOn any = id
	if fresh { // a new coupon names one procedure, or none: its lock, as lockProcedures takes it
		lockOn = written.ProcedureID
		lock = `SELECT pg_advisory_xact_lock_shared(hashtextextended('etchlog-flags:' || $1 || ':' || $2::uuid::text, 0))
			WHERE $2::uuid IS NOT NULL`
	}
	queued := []error{
		queueExec(ctx, tx, lock, site, lockOn),
		queueRows(ctx, tx, optionalRow(&in.procedure), `SELECT `+procedures.columns()+` FROM procedures
			WHERE site = $1 AND id = `+procID+` ORDER BY revision DESC LIMIT 1`, args[:2]...),
		queueRows(ctx, tx, optionalRow(&in.ranges), `SELECT `+rangesColumns+` FROM procedure_ranges
			WHERE site = $1 AND procedure_id = `+procID+` ORDER BY version DESC LIMIT 1`, args[:2]...),
		queueRows(ctx, tx, func(rows pgx.Rows) (err error) { in.stale, err = readStale(rows); return err },
			staleSQL(`SELECT procedure_id, version, procedure_revision FROM procedure_ranges
				WHERE site = $1 AND procedure_id = `+procID+` ORDER BY version DESC LIMIT 1`), args[:2]...),
		queueRows(ctx, tx, in.readActivations, `
			SELECT a.wire_diameter_mm, a.shielding_gas, a.calibration_id, a.action, c.level, c.fit FROM (
				SELECT DISTINCT ON (wire_diameter_mm, shielding_gas) wire_diameter_mm, shielding_gas, calibration_id, action
				FROM calibration_activations
				WHERE site = $1 AND family = $`+fmt.Sprint(len(args)+1)+` AND joint_type = `+joint+`
				  AND process = (SELECT process FROM procedures WHERE site = $1 AND id = `+procID+`
				                 ORDER BY revision DESC LIMIT 1)
				ORDER BY wire_diameter_mm, shielding_gas, activated_at DESC, id DESC) a
			JOIN calibrations c ON c.site = $1 AND c.id = a.calibration_id`, append(args, CalibrationJacksonFixed.Family())...),
	}
	if calibrated != nil {
		queued = append(queued, queueRows(ctx, tx, func(rows pgx.Rows) (err error) {
			*calibrated, err = pgx.CollectExactlyOneRow(rows, pgx.RowTo[bool])
			return err
		},
			`SELECT EXISTS (SELECT 1 FROM calibration_activations WHERE site = $1
				AND process = (SELECT process FROM procedures WHERE site = $1 AND id = `+procID+` ORDER BY revision DESC LIMIT 1))`, args[:2]...))
	}
	if !fresh {
		queued = append(queued,
			queueExec(ctx, tx, `DELETE FROM flags WHERE site = $1 AND subject_kind = 'coupon' AND subject_id = $2 AND kind <> 'drift'`, site, id),
			queueRows(ctx, tx, func(rows pgx.Rows) (err error) { in.sections, err = readSections(rows); return err },
				sectionsSQL, site, id))
	}
	if written == nil {
		queued = append(queued, queueRows(ctx, tx, optionalRow(&in.coupon), fmt.Sprintf(latestCoupon, coupons.columns()), site, id),
			queueRows(ctx, tx, optionalRow(&in.record), `SELECT `+qualificationRecords.columns()+` FROM qualification_records
				WHERE site = $1 AND id = `+fmt.Sprintf(latestCoupon, "qualification_record_id")+` ORDER BY revision DESC LIMIT 1`, site, id))
	} else {
		in.coupon = written
		if written.QualificationRecordID != nil {
			queued = append(queued, queueRows(ctx, tx, optionalRow(&in.record), `SELECT `+qualificationRecords.columns()+` FROM qualification_records
				WHERE site = $1 AND id = $2 ORDER BY revision DESC LIMIT 1`, site, *written.QualificationRecordID))
		}
	}
	if err := firstError(append(queued, flushed(ctx, tx))...); err != nil {
		return 0, err
	}
	if in.coupon == nil {
		return 0, fmt.Errorf("db: coupon %s: %w", id, ErrNotFound)
	}
	c := *in.coupon
	if c.Voided || c.ProcedureID == nil {
		return 0, nil
	}
	if in.procedure == nil {
		return 0, fmt.Errorf("db: procedure %s: %w", *c.ProcedureID, ErrNotFound)
	}
	p := *in.procedure
	if p.Voided { // a voided procedure's records answer to nothing: no new flags
		return 0, nil
	}
	pr := ProcedureRanges{Site: site, ProcedureID: p.ID} // no ranges yet: model flags only
	if in.ranges != nil {
		pr = *in.ranges
		pr.Stale = in.stale
	}
	if c.QualificationRecordID != nil && in.record == nil {
		return 0, fmt.Errorf("db: qualification_record %s: %w", *c.QualificationRecordID, ErrNotFound)
	}
	c.inherit(procedureDefaults(p)) // a field the coupon leaves out was welded as its procedure says
	check, err := in.penetrationCheck(couponGroup(c), p.MinPenetrationMM)
	if err != nil {
		return 0, err
	}
	w := newFlagWriter(site, now, pr)
	w.add(newCouponSubject(c, in.sections, requirementsOf(p, in.record), check))
	return w.flush(ctx, tx)
}

// readActivations reads the latest activation event of each group.
func (in *couponInputs) readActivations(rows pgx.Rows) error {
	var err error
	in.activations, err = pgx.CollectRows(rows, func(r pgx.CollectableRow) (groupActivation, error) {
		var a groupActivation
		return a, r.Scan(&a.wireMM, &a.gas, &a.calibration, &a.action, &a.level, &a.fit)
	})
	return err
}

// penetrationCheck is the package's penetrationCheck over the activations
// read: the check of the calibration in use for group g, or nil.
func (in *couponInputs) penetrationCheck(g CalibrationGroup, minMM *float64) (*predict.PenetrationCheck, error) {
	g = g.canonical()
	for _, a := range in.activations {
		if a.wireMM != g.WireDiameterMM || a.gas != g.ShieldingGas {
			continue
		}
		if a.action != ActionActivate {
			return nil, nil
		}
		var fit CalibrationFit
		if err := json.Unmarshal(a.fit, &fit); err != nil {
			return nil, fmt.Errorf("active calibration: %w", err)
		}
		if fit.Penetration == nil {
			return nil, nil
		}
		return &predict.PenetrationCheck{Fit: *fit.Penetration, Level: a.level, Label: a.calibration.String(), MinPenetrationMM: minMM}, nil
	}
	return nil, nil
}
