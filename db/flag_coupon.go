package db

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"sync"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// A coupon's flags derive from its latest revision, its procedure's latest
// revision, the procedure's latest ranges (and whether they are stale), the
// coupon's current sections, its qualification record and the calibration
// in use for its group. queueCouponInputs reads all of them in one round
// trip: each statement names the coupon and finds the rest by subquery, and
// all of them run after the shared flag lock of the coupon's procedures is
// held, as separate statements in the order below, each with its own
// snapshot. Only the calibration is chosen in Go, because the group's wire
// and gas are canonicalised there (CalibrationGroup.canonical).

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
	fit         *activationFit
}

// activationFit is an activation's calibration fit as stored, decoded on
// first use only, once for every create that judges by the same kept
// inputs (which share it).
type activationFit struct {
	raw  []byte
	once sync.Once
	fit  CalibrationFit
	err  error
}

func (f *activationFit) decoded() (CalibrationFit, error) {
	f.once.Do(func() { f.err = json.Unmarshal(f.raw, &f.fit) })
	return f.fit, f.err
}

// couponInputs is what queueCouponInputs reads.
type couponInputs struct {
	coupon      *Coupon
	procedure   *Procedure
	ranges      *ProcedureRanges // Stale filled
	sections    []predict.Section
	record      *QualificationRecord
	activations []groupActivation
	calibrated  bool         // some calibration of the procedure's process was activated or deactivated at the site (read for a written revision)
	melting     bool         // some of them of the melting-rate family: only then may a new coupon have a point on a drift chart
	changes     *int64       // a new coupon's: the procedure's count of judgement changes, read before the rest (judged.go)
	check       *judgedCheck // the count the write compares, when the inputs were kept from an earlier create
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

// linked reads at most one row of table t into dst, as optionalRow, and
// refuses the write when the record id that field names is not there or is
// voided (linkRefused).
func linked[T any](dst **T, t table, field string, id uuid.UUID, voided func(*T) bool) func(pgx.Rows) error {
	return func(rows pgx.Rows) error {
		if err := optionalRow(dst)(rows); err != nil || rows.Err() != nil {
			return err
		}
		return t.linkRefused(field, id, *dst != nil, *dst != nil && voided(*dst))
	}
}

// recomputeCoupon rewrites one coupon's flags from its latest revision: none
// when it is voided, names no procedure, or its procedure is voided.
func recomputeCoupon(ctx context.Context, tx pgx.Tx, now time.Time, site string, id uuid.UUID) (int, error) {
	in, err := queueCouponInputs(ctx, tx, site, id, nil)
	if err := firstError(err, flushed(ctx, tx)); err != nil {
		return 0, err
	}
	return in.flags(ctx, tx, now, site, id)
}

// readWrittenCoupon is the step that checks the links of a coupon revision
// m about to be written with values c and reads what its flags and its
// inherited fields derive from into *in (queueCouponInputs), before the
// revision's own statements: a procedure or qualification record that is
// not there, or is voided, refuses the write. A new coupon whose
// procedure's inputs kept holds for its joint type takes them from there
// instead (queueKeptInputs), for the write to check, when useKept is set.
// Either way what it reads afresh for a new coupon is kept.
func readWrittenCoupon(ctx context.Context, kept *judgedCache, useKept bool, m Meta, c CouponData, in **couponInputs) step {
	return func(tx pgx.Tx) error {
		if c.ProcedureID == nil && c.QualificationRecordID == nil {
			return &FieldError{Field: "procedure_id", Reason: "a coupon belongs to a procedure or a qualification record; give at least one"}
		}
		c.WeldedOn = DateOf(c.WeldedOn.Time) // as the date column keeps it
		written := &Coupon{Meta: m, CouponData: c}
		var err error
		if useKept && m.Revision == 1 && c.ProcedureID != nil {
			if j := kept.get(judgedKey{m.Site, *c.ProcedureID, c.JointType}); j != nil {
				*in, err = queueKeptInputs(ctx, tx, written, j)
				return err
			}
		}
		*in, err = queueCouponInputs(ctx, tx, m.Site, m.ID, written)
		return err
	}
}

// writtenCouponFlags is the step, after readWrittenCoupon and the write of
// revision m, that fills the fields out leaves out from what it read (as
// inheritCoupons would) and rewrites the coupon's flags. The revision is
// the coupon's latest: the write holds the record (a new one, or a
// correction's record lock), so no other revision can come between. Its
// values are taken as written instead of read back; a new coupon has no
// flags to clear and no sections yet (a section must name a coupon that is
// there, and this one is not until the write commits).
func writtenCouponFlags(ctx context.Context, kept *judgedCache, m Meta, in **couponInputs, out *Coupon) step {
	return func(tx pgx.Tx) error {
		// Inputs kept in the process are all here before anything is sent
		// (a qualification record the coupon names is read): the flags go
		// with the write and COMMIT, in one round trip, the write's own
		// statement failing the transaction if the inputs changed. Read
		// inputs arrive with this flush.
		if k := *in; k.check == nil || k.coupon.QualificationRecordID != nil {
			if err := flushed(ctx, tx); err != nil {
				return err
			}
		}
		kept.keep(*in)
		out.inherit((*in).defaults())
		if _, err := (*in).flags(ctx, tx, m.CreatedAt, m.Site, m.ID); err != nil {
			return err
		}
		if !(*in).calibrated { // no calibration of the process was ever chosen: no drift chart to redraw
			return nil
		}
		if m.Revision == 1 && out.ProcedureID != nil { // a create, under its procedure's flag lock
			if !(*in).melting { // a new coupon's only possible point is on a melting-rate chart (newCouponDrift)
				return nil
			}
			return newCouponDrift(ctx, tx, m.CreatedAt, *out)
		}
		return couponDrift(ctx, tx, m.CreatedAt, m.Site, m.ID)
	}
}

// defaults is what the coupon takes for the fields it leaves out, as
// inheritSQL reads it: from its procedure's latest revision when there is
// one, else from its qualification record's.
func (in *couponInputs) defaults() couponDefaults {
	switch {
	case in.procedure != nil:
		return procedureDefaults(*in.procedure)
	case in.record != nil:
		r := in.record
		return couponDefaults{Process: r.Process, WireDiameterMM: &r.WireDiameterMM, ShieldingGas: r.ShieldingGas, Polarity: &r.Polarity}
	}
	return couponDefaults{}
}

// Flag locks of a coupon write, as lockProcedures takes them: a new coupon
// names one procedure ($2), or none; a correction holds those its stored
// revisions ($2 is the coupon) name and the one it names now ($3), in byte
// order of their ids.
var (
	lockNewCouponProcedure = `SELECT pg_advisory_xact_lock_shared(` + flagLockKey("$1", "$2::uuid") + `)
		WHERE $2::uuid IS NOT NULL`
	lockCorrectedCouponProcedures = `SELECT pg_advisory_xact_lock_shared(` + flagLockKey("$1", "p") + `)
		FROM (SELECT procedure_id AS p FROM coupons WHERE site = $1 AND id = $2 AND procedure_id IS NOT NULL
		      UNION SELECT $3::uuid WHERE $3::uuid IS NOT NULL) ids
		ORDER BY p`
)

// queueCouponInputs takes the shared flag lock of the coupon's procedures
// and queues the reads of what its flags derive from; they arrive in *in
// with the next flush. written, when not nil, is the revision about to be
// written in this transaction, which is then the coupon's latest: its
// procedure, qualification record and joint type are taken from it, and
// the procedure and record it names are checked as links (a missing or
// voided one refuses the write, in that order).
func queueCouponInputs(ctx context.Context, tx pgx.Tx, site string, id uuid.UUID, written *Coupon) (*couponInputs, error) {
	in := &couponInputs{}
	// The procedure and joint type are the latest revision's: read by
	// subquery, or given when the revision is written here.
	lock, lockArgs := lockCouponProcedures, []any{site, id}
	procID, joint, args := fmt.Sprintf(latestCoupon, "procedure_id"), fmt.Sprintf(latestCoupon, "joint_type"), []any{site, id}
	readProcedure := optionalRow(&in.procedure)
	if written != nil {
		procID, joint, args = "$2::uuid", "$3::text", []any{site, written.ProcedureID, written.JointType}
		lock, lockArgs = lockCorrectedCouponProcedures, []any{site, id, written.ProcedureID}
		if written.Revision == 1 {
			lock, lockArgs = lockNewCouponProcedure, []any{site, written.ProcedureID}
		}
		if written.ProcedureID != nil {
			readProcedure = linked(&in.procedure, procedures, "procedure_id", *written.ProcedureID, func(p *Procedure) bool { return p.Voided })
		}
	}
	latestProcess := `(SELECT process FROM procedures WHERE site = $1 AND id = ` + procID + ` ORDER BY revision DESC LIMIT 1)`
	// The drift charts a coupon write may redraw need a calibration of its
	// process: whether there was ever one comes with the group's activations.
	calibrated, melting := `false`, `false`
	if written != nil {
		calibrated = `EXISTS (SELECT 1 FROM calibration_activations WHERE site = $1 AND process = ` + latestProcess + `)`
		melting = `EXISTS (SELECT 1 FROM calibration_activations WHERE site = $1 AND process = ` + latestProcess +
			` AND family = '` + CalibrationLesnewich.Family() + `')`
	}
	queued := []error{queueExec(ctx, tx, lock, lockArgs...)}
	if written != nil && written.Revision == 1 && written.ProcedureID != nil { // a new coupon's inputs may be kept: count first
		queued = append(queued, queueRows(ctx, tx, readChanges(&in.changes), judgementChangesSQL, site, written.ProcedureID))
	}
	queued = append(queued,
		queueRows(ctx, tx, readProcedure, `SELECT `+procedures.columns()+` FROM procedures
			WHERE site = $1 AND id = `+procID+` ORDER BY revision DESC LIMIT 1`, args[:2]...),
		queueRows(ctx, tx, readRangesWithStale(&in.ranges), rangesWithStaleSQL(procID), args[:2]...),
		queueRows(ctx, tx, in.readActivations, `
			SELECT x.calibrated, x.melting, g.wire_diameter_mm, g.shielding_gas, g.calibration_id, g.action, g.level, g.fit
			FROM (SELECT `+calibrated+` AS calibrated, `+melting+` AS melting) x LEFT JOIN (
				SELECT a.wire_diameter_mm, a.shielding_gas, a.calibration_id, a.action, c.level, c.fit FROM (
					SELECT DISTINCT ON (wire_diameter_mm, shielding_gas) wire_diameter_mm, shielding_gas, calibration_id, action
					FROM calibration_activations
					WHERE site = $1 AND family = $`+fmt.Sprint(len(args)+1)+` AND joint_type = `+joint+` AND process = `+latestProcess+`
					ORDER BY wire_diameter_mm, shielding_gas, activated_at DESC, id DESC) a
				JOIN calibrations c ON c.site = $1 AND c.id = a.calibration_id) g ON true`, append(args, CalibrationJacksonFixed.Family())...))
	if written == nil || written.Revision > 1 {
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
		if rid := written.QualificationRecordID; rid != nil {
			queued = append(queued, queueRecordLink(ctx, tx, in, site, *rid))
		}
	}
	return in, firstError(queued...)
}

// flags rewrites the flags of coupon id from what queueCouponInputs read.
func (in *couponInputs) flags(ctx context.Context, tx pgx.Tx, now time.Time, site string, id uuid.UUID) (int, error) {
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

// readActivations reads whether the process was ever calibrated (and in
// the melting-rate family) and the latest activation event of each group:
// one row with no event when there is none.
func (in *couponInputs) readActivations(rows pgx.Rows) error {
	in.activations = nil
	for rows.Next() {
		var (
			wireMM, level *float64
			gas, action   *string
			calibration   *uuid.UUID
			fit           []byte
		)
		if err := rows.Scan(&in.calibrated, &in.melting, &wireMM, &gas, &calibration, &action, &level, &fit); err != nil {
			return err
		}
		if calibration == nil {
			continue
		}
		in.activations = append(in.activations, groupActivation{wireMM: *wireMM, gas: *gas, calibration: *calibration,
			action: *action, level: *level, fit: &activationFit{raw: fit}})
	}
	return rows.Err()
}

// penetrationCheck is the package's penetrationCheck over the activations
// read: the check of the calibration in use for group g, or nil.
func (in *couponInputs) penetrationCheck(g CalibrationGroup, minMM *float64) (*predict.PenetrationCheck, error) {
	if len(in.activations) == 0 { // no group of the process chose a calibration: nothing to match
		return nil, nil
	}
	g = g.canonical()
	for _, a := range in.activations {
		if a.wireMM != g.WireDiameterMM || a.gas != g.ShieldingGas {
			continue
		}
		if a.action != ActionActivate {
			return nil, nil
		}
		fit, err := a.fit.decoded()
		if err != nil {
			return nil, fmt.Errorf("active calibration: %w", err)
		}
		if fit.Penetration == nil {
			return nil, nil
		}
		return &predict.PenetrationCheck{Fit: *fit.Penetration, Level: a.level, Label: a.calibration.String(), MinPenetrationMM: minMM}, nil
	}
	return nil, nil
}
