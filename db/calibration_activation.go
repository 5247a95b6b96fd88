package db

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// CalibrationActivation records that a calibration became the one used for
// its group and model, by whom, when and why. The active calibration of a
// group and model is its latest activation; activations are never removed,
// so re-activating an older calibration is a new activation.
type CalibrationActivation struct {
	Site          string           `db:"site" json:"site"`
	ID            uuid.UUID        `db:"id" json:"id"`
	ActivatedAt   time.Time        `db:"activated_at" json:"activated_at"`
	ActivatedBy   string           `db:"activated_by" json:"activated_by"`
	Reason        string           `db:"reason" json:"reason"`
	CalibrationID uuid.UUID        `db:"calibration_id" json:"calibration_id"`
	Model         CalibrationModel `db:"model" json:"model"`
	CalibrationGroup
}

const activationColumns = `site, id, activated_at, activated_by, reason, calibration_id, model,
	process, wire_diameter_mm, shielding_gas, joint_type`

// ActivateCalibration makes the calibration the active one for its group and
// model, in one transaction with its audit event (action "activate") and the
// recomputed flags of the group's coupons.
func (s *Store) ActivateCalibration(ctx context.Context, a Actor, calibrationID uuid.UUID, reason string) (CalibrationActivation, error) {
	if strings.TrimSpace(reason) == "" {
		return CalibrationActivation{}, &FieldError{Field: "reason", Reason: "is required: say why this calibration is to be used"}
	}
	id, err := uuid.NewV7()
	if err != nil {
		return CalibrationActivation{}, err
	}
	act := CalibrationActivation{Site: a.Site, ID: id, ActivatedAt: s.now(), ActivatedBy: a.Name, Reason: reason, CalibrationID: calibrationID}
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
		if _, err := tx.Exec(ctx, `INSERT INTO calibration_activations (`+activationColumns+`)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)`,
			act.Site, act.ID, act.ActivatedAt, act.ActivatedBy, act.Reason, act.CalibrationID, act.Model,
			act.Process, act.WireDiameterMM, act.ShieldingGas, act.JointType); err != nil {
			return mapError(err)
		}
		if err := s.AppendLeaf(ctx, tx, LeafEntry{Kind: "calibration_activation", Site: a.Site, ID: act.ID, Revision: 1,
			Actor: act.ActivatedBy, Action: "activate", Reason: reason, At: act.ActivatedAt}); err != nil {
			return err
		}
		// The group's model flags follow the calibration now in use, in this transaction.
		return recomputeGroup(ctx, tx, act.ActivatedAt, a.Site, act.CalibrationGroup)
	})
	if err != nil {
		return CalibrationActivation{}, fmt.Errorf("db: activate calibration %s: %w", calibrationID, err)
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
