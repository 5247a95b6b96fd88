package db

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"sync"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// CalibrationActivation records that a calibration became the one used for
// its group (Action "activate") or stopped being used ("deactivate"), by
// whom, when and why. Per group and model family (penetration: jackson_fixed
// and jackson_free; melting: lesnewich) the latest such event decides,
// whatever the kind of model: the engineer's last choice wins. Events are
// never removed, so re-activating an older calibration is a new event.
type CalibrationActivation struct {
	Site          string           `db:"site" json:"site"`
	ID            uuid.UUID        `db:"id" json:"id"`
	Action        string           `db:"action" json:"action"`
	ActivatedAt   time.Time        `db:"activated_at" json:"activated_at"`
	ActivatedBy   string           `db:"activated_by" json:"activated_by"`
	Reason        string           `db:"reason" json:"reason"`
	CalibrationID uuid.UUID        `db:"calibration_id" json:"calibration_id"`
	Model         CalibrationModel `db:"model" json:"model"`
	CalibrationGroup
}

// Activation events.
const (
	ActionActivate   = "activate"
	ActionDeactivate = "deactivate"
)

// Family is the model family a calibration model answers for: penetration
// (both Jackson forms) or melting (Lesnewich).
func (m CalibrationModel) Family() string {
	if m == CalibrationLesnewich {
		return "melting"
	}
	return "penetration"
}

const activationColumns = `site, id, action, activated_at, activated_by, reason, calibration_id, model,
	process, wire_diameter_mm, shielding_gas, joint_type`

// latestEvent is the latest activation event of a group and family: $1
// site, $2 family, $3 process, $4 wire diameter, $5 gas, $6 joint type.
const latestEvent = `SELECT calibration_id, action FROM calibration_activations
	WHERE site = $1 AND family = $2 AND process = $3 AND wire_diameter_mm = $4
	  AND shielding_gas = $5 AND joint_type = $6
	ORDER BY activated_at DESC, id DESC LIMIT 1`

// activeOf returns the calibration in use for group g and family (uuid.Nil:
// none, never activated or last deactivated).
func activeOf(ctx context.Context, q querier, site, family string, g CalibrationGroup) (uuid.UUID, error) {
	g = g.canonical()
	var id uuid.UUID
	var action string
	err := q.QueryRow(ctx, latestEvent, site, family, g.Process, g.WireDiameterMM, g.ShieldingGas, g.JointType).Scan(&id, &action)
	if errors.Is(err, pgx.ErrNoRows) || (err == nil && action != ActionActivate) {
		return uuid.Nil, nil
	}
	return id, err
}

// ActivateCalibration makes the calibration the active one for its group and
// model, in one transaction with its audit event (action "activate") and the
// recomputed flags of the group's coupons.
func (s *Store) ActivateCalibration(ctx context.Context, a Actor, calibrationID uuid.UUID, reason string) (CalibrationActivation, error) {
	if strings.TrimSpace(reason) == "" {
		return CalibrationActivation{}, &FieldError{Field: "reason", Reason: "is required: say why this calibration is to be used"}
	}
	return s.activationEvent(ctx, a, calibrationID, ActionActivate, reason)
}

// DeactivateCalibration stops using the calibration for its group, so the
// group has no calibration of its family until one is activated; the
// calibration must be the one in use (else ErrConflict). One transaction
// with its audit event (action "deactivate") and the group's recomputed flags.
func (s *Store) DeactivateCalibration(ctx context.Context, a Actor, calibrationID uuid.UUID, reason string) (CalibrationActivation, error) {
	if strings.TrimSpace(reason) == "" {
		return CalibrationActivation{}, &FieldError{Field: "reason", Reason: "is required: say why this calibration is no longer to be used"}
	}
	return s.activationEvent(ctx, a, calibrationID, ActionDeactivate, reason)
}

// activationEvent writes one activation or deactivation of a calibration.
func (s *Store) activationEvent(ctx context.Context, a Actor, calibrationID uuid.UUID, action, reason string) (CalibrationActivation, error) {
	id, err := uuid.NewV7()
	if err != nil {
		return CalibrationActivation{}, err
	}
	act := CalibrationActivation{Site: a.Site, ID: id, Action: action, ActivatedAt: s.now(), ActivatedBy: a.Name, Reason: reason, CalibrationID: calibrationID}
	err = s.tx(ctx, func(tx pgx.Tx) error {
		err := tx.QueryRow(ctx, `
			SELECT model, process, wire_diameter_mm, shielding_gas, joint_type
			FROM calibrations WHERE site = $1 AND id = $2`, a.Site, calibrationID).
			Scan(&act.Model, &act.Process, &act.WireDiameterMM, &act.ShieldingGas, &act.JointType)
		if errors.Is(err, pgx.ErrNoRows) {
			return fmt.Errorf("calibration %s: %w", calibrationID, ErrNotFound)
		}
		if err != nil {
			return err
		}
		if err := lockGroup(ctx, tx, a.Site, act.Model.Family(), act.CalibrationGroup); err != nil { // one choice per group at a time
			return err
		}
		if action == ActionDeactivate {
			cur, err := activeOf(ctx, tx, a.Site, act.Model.Family(), act.CalibrationGroup)
			if err != nil {
				return err
			}
			if cur != calibrationID {
				return fmt.Errorf("%w: calibration %s is not the one in use for its group (in use: %s)", ErrConflict, calibrationID, inUse(cur))
			}
		}
		if _, err := tx.Exec(ctx, `INSERT INTO calibration_activations (`+activationColumns+`)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12)`,
			act.Site, act.ID, act.Action, act.ActivatedAt, act.ActivatedBy, act.Reason, act.CalibrationID, act.Model,
			act.Process, act.WireDiameterMM, act.ShieldingGas, act.JointType); err != nil {
			return mapError(err)
		}
		if err := s.AppendLeaf(ctx, tx, LeafEntry{Kind: "calibration_activation", Site: a.Site, ID: act.ID, Revision: 1,
			Actor: act.ActivatedBy, Action: action, Reason: reason, At: act.ActivatedAt}); err != nil {
			return err
		}
		// The group's model flags and drift chart follow the calibration now
		// in use, in this transaction: computed first without the flag locks,
		// then reconciled under them (calibration_recompute.go).
		r, err := s.newGroupRecompute(ctx, tx, act)
		if err != nil {
			return err
		}
		if err := r.compute(ctx, tx); err != nil {
			return err
		}
		activationStep(a.Site, "computed")
		if err := r.catchUp(ctx, tx); err != nil {
			return err
		}
		activationStep(a.Site, "caught-up")
		if err := lockProcess(ctx, tx, a.Site, act.Process); err != nil {
			return err
		}
		activationStep(a.Site, "locked")
		return r.reconcile(ctx, tx)
	})
	if err != nil {
		return CalibrationActivation{}, fmt.Errorf("db: %s calibration %s: %w", action, calibrationID, err)
	}
	return act, nil
}

// CalibrationActivations lists every activation of one calibration, oldest first.
func (s *Store) CalibrationActivations(ctx context.Context, site string, calibrationID uuid.UUID) ([]CalibrationActivation, error) {
	rows, _ := s.pool.Query(ctx, `SELECT `+activationColumns+` FROM calibration_activations
		WHERE site = $1 AND calibration_id = $2 ORDER BY activated_at, id`, site, calibrationID)
	acts, err := pgx.CollectRows(rows, pgx.RowToStructByName[CalibrationActivation])
	if err != nil {
		return nil, fmt.Errorf("db: activations of calibration %s: %w", calibrationID, err)
	}
	return acts, nil
}

// activationHook holds, per site and step ("marked": once the log's
// position is read, before the group is; "computed": before the
// catch-up rounds; "caught-up": before the flag locks; "locked": once they
// are held), what a test or benchmark runs
// there (see SetActivationHookForTest).
var activationHook struct {
	sync.Mutex
	fs map[string]func()
}

// activationStep runs the hook of the site and step, if any.
func activationStep(site, step string) {
	activationHook.Lock()
	f := activationHook.fs[site+"\x00"+step]
	activationHook.Unlock()
	if f != nil {
		f()
	}
}

// newGroupRecompute prepares the recomputation of the group's flags after
// activation event act: the check and chart of the calibration it makes
// active, or none after a deactivation.
func (s *Store) newGroupRecompute(ctx context.Context, tx pgx.Tx, act CalibrationActivation) (*groupRecompute, error) {
	r := &groupRecompute{site: act.Site, now: act.ActivatedAt, g: act.CalibrationGroup.canonical(), family: act.Model.Family()}
	if act.Action != ActionActivate {
		return r, nil
	}
	if r.family == CalibrationJacksonFixed.Family() {
		var level float64
		var fit CalibrationFit
		if err := tx.QueryRow(ctx, `SELECT level, fit FROM calibrations WHERE site = $1 AND id = $2`, act.Site, act.CalibrationID).
			Scan(&level, &fit); err != nil {
			return nil, fmt.Errorf("active calibration: %w", err)
		}
		if fit.Penetration != nil {
			r.check = &predict.PenetrationCheck{Fit: *fit.Penetration, Level: level, Label: act.CalibrationID.String()}
		}
	}
	r.calID = act.CalibrationID
	return r, nil
}

// inUse names the calibration in use, or says there is none.
func inUse(id uuid.UUID) string {
	if id == uuid.Nil {
		return "none"
	}
	return id.String()
}
