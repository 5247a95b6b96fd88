package db

import (
	"context"
	"errors"
	"etchlog/predict"
	"fmt"
	"strconv"
	"strings"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// calibrationColumns are the stored columns of a calibration, read from "c".
const calibrationColumns = `c.site, c.id, c.created_at, c.created_by, c.model, c.process,
	c.wire_diameter_mm, c.shielding_gas, c.joint_type, c.welded_from, c.welded_to + 1 AS welded_to, c.procedure_id,
	c.level, c.arc_length_mm, c.fit, coalesce(c.coupon_ids, '{}') AS coupon_ids, c.note, c.selection,
	coalesce(c.sample_count, cardinality(c.coupon_ids)) AS sample_count, coalesce(encode(c.sample_digest, 'hex'), '') AS sample_digest`

// latestActivations is, per group and model family, the calibration in
// use: the latest activation event's, unless that event is a deactivation.
const latestActivations = `latest AS (
	SELECT calibration_id FROM (
		SELECT DISTINCT ON (family, process, wire_diameter_mm, shielding_gas, joint_type) calibration_id, action
		FROM calibration_activations WHERE site = $1
		ORDER BY family, process, wire_diameter_mm, shielding_gas, joint_type, activated_at DESC, id DESC) ev
	WHERE action = 'activate')`

// Calibration reads one calibration with the samples it was fitted to:
// stored inline, or, up to InlineSampleLimit samples, re-derived from its
// selection and checked (rederive). Above that it reads the row alone and
// says so in SampleCheck ("not_checked"): CalibrationChecked re-derives.
func (s *Store) Calibration(ctx context.Context, site string, id uuid.UUID) (Calibration, error) {
	return s.CalibrationChecked(ctx, site, id, false)
}

// CalibrationChecked is Calibration; with verify it re-derives the
// selection and checks its count and digest whatever the number of samples
// (one pass over the selection, memory flat in its size).
func (s *Store) CalibrationChecked(ctx context.Context, site string, id uuid.UUID, verify bool) (Calibration, error) {
	rows, _ := s.pool.Query(ctx, `WITH `+latestActivations+`
		SELECT `+calibrationColumns+`, c.samples, l.calibration_id IS NOT NULL AS active
		FROM calibrations c LEFT JOIN latest l ON l.calibration_id = c.id
		WHERE c.site = $1 AND c.id = $2`, site, id)
	c, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[Calibration])
	if errors.Is(err, pgx.ErrNoRows) {
		return c, fmt.Errorf("db: calibration %s: %w", id, ErrNotFound)
	}
	if err != nil {
		return c, fmt.Errorf("db: calibration %s: %w", id, err)
	}
	if err := s.rederive(ctx, &c, verify); err != nil {
		return c, err
	}
	c.listSampleIDs()
	one := []Calibration{c}
	err = attachSignOffs(ctx, s.pool, site, one)
	return one[0], err
}

// CalibrationFilter selects calibrations in a list; zero fields do not filter.
// ShieldingGas is a pointer because the empty gas is a real group value.
type CalibrationFilter struct {
	Model          CalibrationModel
	Process        string
	WireDiameterMM *float64
	ShieldingGas   *string
	JointType      string
	ActiveOnly     bool
}

// Calibrations lists calibrations in log order after the cursor, without
// their samples. Like the record lists it pages by the calibration's log
// index, which follows commit order, so a client following the cursor sees
// every committed calibration exactly once, and every page (an empty one
// too) returns a cursor to resume from.
func (s *Store) Calibrations(ctx context.Context, site string, cf CalibrationFilter, cursor string, limit int) (Page[Calibration], error) {
	if limit <= 0 || limit > MaxPageSize {
		limit = MaxPageSize
	}
	from, err := logCursor("calibrations", cursor)
	if err != nil {
		return Page[Calibration]{}, fmt.Errorf("db: list calibrations: %w", err)
	}
	f := newFilter()
	f.args[0], f.args[1] = site, from
	if cf.Model != "" {
		f.add("c.model = ?", cf.Model)
	}
	if cf.Process != "" {
		f.add("c.process = ?", cf.Process)
	}
	if cf.WireDiameterMM != nil {
		f.add("c.wire_diameter_mm = ?", CalibrationGroup{WireDiameterMM: *cf.WireDiameterMM}.canonical().WireDiameterMM)
	}
	if cf.ShieldingGas != nil {
		f.add("c.shielding_gas = ?", predict.CanonicalGas(*cf.ShieldingGas))
	}
	if cf.JointType != "" {
		f.add("c.joint_type = ?", cf.JointType)
	}
	if cf.ActiveOnly {
		f.add("l.calibration_id IS NOT NULL")
	}
	where := "true"
	if len(f.conds) > 0 {
		where = strings.Join(f.conds, " AND ")
	}
	f.args = append(f.args, limit)
	s.awaitLogged(ctx, site) // a page shows every calibration acknowledged before it was asked for
	rows, _ := s.pool.Query(ctx, `WITH `+latestActivations+`
		SELECT `+calibrationColumns+`, NULL::jsonb AS samples, l.calibration_id IS NOT NULL AS active, lg.leaf_index
		FROM log_leaves lg
		JOIN calibrations c ON c.site = lg.site AND c.id = lg.record_id
		LEFT JOIN latest l ON l.calibration_id = c.id
		WHERE lg.site = $1 AND lg.kind = 'calibration' AND lg.leaf_index >= $2 AND `+where+`
		ORDER BY lg.leaf_index LIMIT $`+strconv.Itoa(len(f.args)), f.args...)
	items, last, err := collectIndexed[Calibration](rows)
	if err != nil {
		return Page[Calibration]{}, fmt.Errorf("db: list calibrations: %w", mapError(err))
	}
	for i := range items {
		items[i].listSampleIDs()
	}
	p := Page[Calibration]{Items: items, Next: nextLogCursor("calibrations", from, last, len(items))}
	return p, attachSignOffs(ctx, s.pool, site, p.Items)
}

// ActiveCalibration returns the calibration in use for the group if it is
// of the given model, without its samples, or ErrNotFound: per group and
// family the latest activation decides, so when jackson_fixed was activated
// after jackson_free, ActiveCalibration(g, jackson_free) is ErrNotFound.
func (s *Store) ActiveCalibration(ctx context.Context, site string, g CalibrationGroup, model CalibrationModel) (Calibration, error) {
	g = g.canonical()
	id, err := activeOf(ctx, s.pool, site, model.Family(), g)
	if err != nil {
		return Calibration{}, fmt.Errorf("db: active %s calibration: %w", model, err)
	}
	rows, _ := s.pool.Query(ctx, `
		SELECT `+calibrationColumns+`, NULL::jsonb AS samples, true AS active
		FROM calibrations c WHERE c.site = $1 AND c.id = $2 AND c.model = $3`, site, id, model)
	c, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[Calibration])
	if errors.Is(err, pgx.ErrNoRows) {
		return c, fmt.Errorf("db: active %s calibration for %s %.3f mm %q %s: %w",
			model, g.Process, g.WireDiameterMM, g.ShieldingGas, g.JointType, ErrNotFound)
	}
	if err != nil {
		return c, fmt.Errorf("db: active %s calibration: %w", model, err)
	}
	return c, nil
}
