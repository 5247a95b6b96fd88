package db

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// Drift charts follow a calibration group's new coupons (those its active
// calibration was not fitted to) in welding order, against that
// calibration, for the group as a whole and per recorded power source,
// welder and wire lot (predict.DriftCharts). A chart that is out now raises
// one drift flag, whose subject is the coupon where the shift is estimated
// to have begun. Drift flags of one chart are rewritten together, in the
// transaction of any write that changes the chart: a coupon or a section of
// it, an activation, a procedure correction (it may move coupons between
// groups).

// DriftCoupon is one coupon on a drift chart: which it is, when it was
// welded, what with, its residual and prediction SD in the model's units.
type DriftCoupon struct {
	ID            uuid.UUID  `json:"coupon_id"`
	Mark          string     `json:"coupon_mark"`
	ProcedureID   *uuid.UUID `json:"procedure_id,omitempty"`
	WeldedOn      Date       `json:"welded_on"`
	WelderID      string     `json:"welder_id"`
	PowerSourceID string     `json:"power_source_id"`
	FillerLot     string     `json:"filler_lot"`
	Residual      float64    `json:"residual"`
	SD            float64    `json:"sd"`
}

// DriftReport is the drift of one group and model family: the calibration
// in use, the unit of the residuals, the coupons in welding order and the
// charts (nil when no calibration of the family is in use).
type DriftReport struct {
	Group         CalibrationGroup
	Family        string
	CalibrationID uuid.UUID
	Model         CalibrationModel
	Unit          string
	ResidualSD    float64
	Coupons       []DriftCoupon
	Series        []predict.DriftSeries
}

// driftRow is one current coupon of a candidate group, read in one query.
type driftRow struct {
	ID             uuid.UUID  `db:"id"`
	CouponMark     string     `db:"coupon_mark"`
	ProcedureID    *uuid.UUID `db:"procedure_id"`
	WeldedOn       Date       `db:"welded_on"`
	WelderID       string     `db:"welder_id"`
	PowerSourceID  string     `db:"power_source_id"`
	FillerLot      string     `db:"filler_lot"`
	Process        string     `db:"process"`
	JointType      string     `db:"joint_type"`
	ShieldingGas   string     `db:"shielding_gas"`
	WireDiameterMM float64    `db:"wire_diameter_mm"`
	CurrentA       float64    `db:"current_a"`
	VoltageV       float64    `db:"voltage_v"`
	TravelSpeed    float64    `db:"travel_speed_mm_s"`
	WireFeedSpeed  *float64   `db:"wire_feed_speed_m_min"`
	CTWDMM         *float64   `db:"ctwd_mm"`
	PenetrationsMM []float64  `db:"penetrations_mm"`
}

// driftCoupons is the current, non-voided coupons of a process and joint
// type with their effective wire, gas and sections, in welding order (ties
// by id, which follows creation), leaving out the coupons calibration $4
// was fitted to as far as its set is stored in calibration_fitted (none
// for uuid.Nil). Its coupons are each coupon's latest revision of joint
// type $3 (driftCur).
var driftCoupons = fmt.Sprintf(driftSQL, `
		SELECT DISTINCT ON (id) `+driftCurColumns+`
		FROM coupons c WHERE site = $1 AND joint_type = $3
		  AND `+notFitted+`
		ORDER BY id, revision DESC`)

// driftCouponsOf is driftCoupons restricted to the coupons $5 (a write's
// coupons, or those an activation reads again because they were written
// while it computed): the same rows, each coupon's revision found by its
// key, so that the cost follows the coupons asked for, whatever the plan.
var driftCouponsOf = fmt.Sprintf(driftSQL, `
		SELECT c.* FROM (SELECT DISTINCT unnest($5::uuid[]) AS id) u
		CROSS JOIN LATERAL (SELECT `+driftCurColumns+` FROM coupons c
			WHERE c.site = $1 AND c.id = u.id AND c.joint_type = $3 ORDER BY c.revision DESC LIMIT 1) c
		WHERE `+notFitted)

// notFitted holds for a coupon revision c whose coupon calibration $4 was
// not fitted to, as far as its set is stored: a lookup by the whole key per
// row, written as a scalar subquery so that PostgreSQL cannot turn it into
// an anti-join. As one, planned on statistics taken before a new
// calibration's set was written, it scanned the set again for every coupon
// (12 ms a coupon at 100,000 fitted coupons).
const notFitted = `(SELECT true FROM calibration_fitted f
			WHERE f.site = $1 AND f.calibration_id = $4 AND f.coupon_id = c.id LIMIT 1) IS NULL`

// driftCurColumns are the coupon columns a chart reads.
const driftCurColumns = `id, voided, coupon_mark, procedure_id, qualification_record_id, welded_on, welder_id,
		       power_source_id, filler_lot, joint_type, current_a, voltage_v, travel_speed_mm_s,
		       wire_feed_speed_m_min, ctwd_mm, wire_diameter_mm, shielding_gas`

// driftSQL is a chart's query over the coupons (revisions) %s gives.
const driftSQL = `
	WITH cur AS (%s
	)
	SELECT cur.id, cur.coupon_mark, cur.procedure_id, cur.welded_on, cur.welder_id, cur.power_source_id, cur.filler_lot,
	       coalesce(p.process, r.process, '') AS process, cur.joint_type,
	       coalesce(nullif(cur.shielding_gas, ''), p.shielding_gas, r.shielding_gas, '') AS shielding_gas,
	       coalesce(cur.wire_diameter_mm, p.wire_diameter_mm, r.wire_diameter_mm) AS wire_diameter_mm,
	       cur.current_a, cur.voltage_v, cur.travel_speed_mm_s, cur.wire_feed_speed_m_min, cur.ctwd_mm,
	       coalesce(m.pens, '{}') AS penetrations_mm
	FROM cur
	LEFT JOIN LATERAL (SELECT process, wire_diameter_mm, shielding_gas FROM procedures p WHERE p.site = $1 AND p.id = cur.procedure_id
	                   ORDER BY revision DESC LIMIT 1) p ON true
	LEFT JOIN LATERAL (SELECT process, wire_diameter_mm, shielding_gas FROM qualification_records r WHERE r.site = $1 AND r.id = cur.qualification_record_id
	                   ORDER BY revision DESC LIMIT 1) r ON true
	LEFT JOIN LATERAL (SELECT array_agg(sec.penetration_mm ORDER BY sec.id) AS pens FROM (
		SELECT DISTINCT ON (id) id, voided, penetration_mm FROM measurements
		WHERE coupon_id = cur.id AND site = $1 ORDER BY id, revision DESC) sec
		WHERE NOT sec.voided) m ON true
	WHERE NOT cur.voided AND coalesce(p.process, r.process, '') = $2
	ORDER BY cur.welded_on, cur.id`

// driftCal is what a drift chart reads of its calibration: the model, the
// fit, the arc length and, only where the coupons it was fitted to are not
// stored in calibration_fitted, those coupons (not charted).
type driftCal struct {
	id     uuid.UUID
	model  CalibrationModel
	fit    CalibrationFit
	arc    *float64
	fitted map[uuid.UUID]bool // nil: the set is stored (driftCoupons leaves it out)
}

// driftCalibration reads calibration calID for a drift chart; the coupons
// it was fitted to are left to calibration_fitted (see ensureFitted).
func driftCalibration(ctx context.Context, q querier, site string, calID uuid.UUID) (driftCal, error) {
	dc := driftCal{id: calID}
	err := q.QueryRow(ctx, `SELECT model, fit, arc_length_mm FROM calibrations WHERE site = $1 AND id = $2`,
		site, calID).Scan(&dc.model, &dc.fit, &dc.arc)
	if err != nil {
		return dc, fmt.Errorf("drift: calibration %s: %w", calID, err)
	}
	return dc, nil
}

// driftPoint is one row of driftCoupons with its residual and SD against
// the chart's calibration; ok is false when the coupon is not charted (it
// was fitted, is outside the group, or the fit cannot judge it).
type driftPoint struct {
	row     driftRow
	res, sd float64
	ok      bool
}

// point judges one coupon of the candidate rows for group g.
func (dc driftCal) point(c driftRow, g CalibrationGroup) driftPoint {
	p := driftPoint{row: c}
	if dc.fitted[c.ID] || !g.has(c.Process, c.WireDiameterMM, c.ShieldingGas, c.JointType) {
		return p
	}
	p.res, p.sd, p.ok = driftResidual(c, dc.fit, dc.arc)
	return p
}

// readDriftPoints runs query (driftCoupons or driftCouponsOf: $1 site, $2
// process, $3 joint type, $4 the calibration whose stored fitted set is left
// out, then args) and judges each row; it returns the charted points, in
// the query's order.
func (dc driftCal) readDriftPoints(ctx context.Context, q querier, g CalibrationGroup, query, site string, args ...any) ([]driftPoint, error) {
	rows, err := q.Query(ctx, query, append([]any{site, g.Process, g.JointType, dc.excluded()}, args...)...)
	if err != nil {
		return nil, fmt.Errorf("drift: coupons: %w", err)
	}
	defer rows.Close()
	var pts []driftPoint
	for rows.Next() {
		c, err := pgx.RowToStructByName[driftRow](rows)
		if err != nil {
			return nil, fmt.Errorf("drift: coupons: %w", err)
		}
		if p := dc.point(c, g); p.ok {
			pts = append(pts, p)
		}
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("drift: coupons: %w", err)
	}
	return pts, nil
}

// excluded is the calibration whose stored fitted set driftCoupons leaves
// out: this one, unless its set is held in memory instead.
func (dc driftCal) excluded() uuid.UUID {
	if dc.fitted != nil {
		return uuid.Nil
	}
	return dc.id
}

// report charts the points (in welding order) of group g for one family.
func (dc driftCal) report(g CalibrationGroup, family string, pts []driftPoint) DriftReport {
	rep := DriftReport{Group: g, Family: family, CalibrationID: dc.id, Model: dc.model}
	var obs []predict.DriftObservation
	for _, p := range pts {
		if !p.ok {
			continue
		}
		c := p.row
		rep.Coupons = append(rep.Coupons, DriftCoupon{ID: c.ID, Mark: c.CouponMark, ProcedureID: c.ProcedureID, WeldedOn: c.WeldedOn,
			WelderID: c.WelderID, PowerSourceID: c.PowerSourceID, FillerLot: c.FillerLot, Residual: p.res, SD: p.sd})
		obs = append(obs, predict.DriftObservation{ID: c.ID.String(), Residual: p.res, SD: p.sd,
			PowerSource: c.PowerSourceID, Welder: c.WelderID, FillerLot: c.FillerLot})
	}
	switch {
	case dc.fit.Penetration != nil:
		rep.Unit, rep.ResidualSD = "ln(mm)", dc.fit.Penetration.ResidualSDLn
	case dc.fit.Melting != nil:
		rep.Unit, rep.ResidualSD = "kg/h", dc.fit.Melting.ResidualSDKgPerH
	}
	rep.Series = predict.DriftCharts(obs)
	return rep
}

// driftResidual is a coupon's residual against the fit; false when the
// coupon has nothing the fit predicts (no section, no wire feed or CTWD) or
// the fit cannot judge it.
func driftResidual(c driftRow, fit CalibrationFit, arc *float64) (res, sd float64, ok bool) {
	var err error
	switch {
	case fit.Penetration != nil:
		if len(c.PenetrationsMM) == 0 {
			return 0, 0, false
		}
		res, sd, err = fit.Penetration.Residual(predict.PenetrationSample{ID: c.ID.String(), CurrentA: c.CurrentA,
			VoltageV: c.VoltageV, TravelSpeedMMPerS: c.TravelSpeed, PenetrationMM: *predict.SectionMean(c.PenetrationsMM)})
	case fit.Melting != nil && arc != nil && c.WireFeedSpeed != nil && c.CTWDMM != nil:
		mr, err1 := predict.WireMeltingRateKgPerH(*c.WireFeedSpeed, c.WireDiameterMM, predict.CarbonSteelDensityKgPerMM3)
		ext, err2 := predict.ExtensionFromCTWD(*c.CTWDMM, *arc)
		if err = errors.Join(err1, err2); err == nil {
			res, sd, err = fit.Melting.Residual(predict.MeltingSample{ID: c.ID.String(), CurrentA: c.CurrentA, ExtensionMM: ext, MeltingRateKgPerH: mr})
		}
	default:
		return 0, 0, false
	}
	return res, sd, err == nil
}

// Drift returns the drift charts of group g for a model family
// ("penetration" or "melting") against the calibration in use;
// ErrNotFound when none is in use. It reads the chart's stored points; a
// chart not stored yet is drawn from the records (and not stored: a read
// writes nothing).
func (s *Store) Drift(ctx context.Context, site string, g CalibrationGroup, family string) (DriftReport, error) {
	g = g.canonical()
	id, err := activeOf(ctx, s.pool, site, family, g)
	if err != nil {
		return DriftReport{}, fmt.Errorf("db: drift: %w", err)
	}
	if id == uuid.Nil {
		return DriftReport{Group: g, Family: family}, fmt.Errorf("db: drift: no %s calibration in use for %s %g mm %q %s: %w",
			family, g.Process, g.WireDiameterMM, g.ShieldingGas, g.JointType, ErrNotFound)
	}
	tx, err := s.pool.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
	if err != nil {
		return DriftReport{}, fmt.Errorf("db: drift: %w", err)
	}
	defer tx.Rollback(ctx) //nolint:errcheck // read only
	dc, err := driftCalibration(ctx, tx, site, id)
	if err != nil {
		return DriftReport{Group: g, Family: family, CalibrationID: id}, fmt.Errorf("db: %w", err)
	}
	pts, err := dc.readChart(ctx, tx, site, driftKey(family, g), g)
	if err != nil {
		return DriftReport{Group: g, Family: family, CalibrationID: id, Model: dc.model}, fmt.Errorf("db: %w", err)
	}
	return dc.report(g, family, pts), nil
}

// driftKey names a chart in the flags table: family and canonical group.
func driftKey(family string, g CalibrationGroup) string {
	g = g.canonical()
	return fmt.Sprintf("%s|%s|%.3f|%s|%s", family, g.Process, g.WireDiameterMM, g.ShieldingGas, g.JointType)
}

// driftFlags turns the charts that are out now into flags.
func driftFlags(rep DriftReport, now time.Time) []Flag {
	var out []Flag
	for _, s := range rep.Series {
		sig := s.Chart.Current
		if sig == nil || s.ExplainedBy != "" { // a chart another split explains raises no flag of its own
			continue
		}
		since := rep.Coupons[s.Indices[sig.Since]]
		first := rep.Coupons[s.Indices[sig.Signal]]
		shift := sig.ShiftSD * rep.ResidualSD
		proc := uuid.Nil
		if since.ProcedureID != nil {
			proc = *since.ProcedureID
		}
		value, text, dir := shift, s.Value, sig.Direction
		if text == "" {
			text = "all"
		}
		size := fmt.Sprintf("%+.3g %s", shift, rep.Unit)
		if rep.Unit == "ln(mm)" {
			size += fmt.Sprintf(" (about %+.0f %% penetration)", 100*(math.Exp(shift)-1))
		}
		detail := fmt.Sprintf("drift of %s: its coupons since %s (welded %s) come out %s %s the %s calibration in use; "+
			"the chart (tabular CUSUM, k = %g, h = %g) crossed its limit at %s. %s",
			s.Label(), since.Mark, since.WeldedOn.Format(time.DateOnly), size, dir, rep.Model,
			s.Chart.K, s.Chart.H, first.Mark, sentence(s.Advice))
		out = append(out, Flag{SubjectKind: SubjectCoupon, SubjectID: since.ID, SubjectAt: since.WeldedOn.Time, ProcedureID: proc,
			Kind: "drift", Variable: driftVariable(rep.Family, s.Field), Unit: rep.Unit, Value: &value, ValueText: &text,
			Direction: &dir, Detail: detail, ComputedAt: now})
	}
	return out
}

// driftVariable is a drift flag's variable: the quantity charted and the
// split, e.g. penetration_mm:power_source_id.
func driftVariable(family, field string) string {
	if family == "melting" {
		return "melting_rate_kg_h:" + field
	}
	return "penetration_mm:" + field
}

// families are the model families a group may have a calibration of.
var families = []string{"penetration", "melting"}

// recomputeDrift rewrites the drift flags of the charts of groups, under
// each chart's lock (taken last in every write, after the flag locks, so it
// cannot close a cycle): the chart's reader sees every coupon committed
// before it. With coupons only their points are judged again, the others
// read as stored (drift_points); without (nil), or for a chart whose stored
// points are not against the calibration in use, the chart is drawn again
// from the records and stored.
func recomputeDrift(ctx context.Context, tx pgx.Tx, now time.Time, site string, groups []CalibrationGroup, coupons []uuid.UUID) error {
	return recomputeCharts(ctx, tx, now, site, chartKeys(groups), coupons)
}

// chartKeys are the charts of groups, every family of each: key to group.
func chartKeys(groups []CalibrationGroup) map[string]CalibrationGroup {
	keys := map[string]CalibrationGroup{}
	for _, g := range groups {
		for _, f := range families {
			keys[driftKey(f, g)] = g.canonical()
		}
	}
	return keys
}

// recomputeCharts is recomputeDrift for the charts keys names.
func recomputeCharts(ctx context.Context, tx pgx.Tx, now time.Time, site string, keys map[string]CalibrationGroup, coupons []uuid.UUID) error {
	sorted := make([]string, 0, len(keys))
	for k := range keys {
		sorted = append(sorted, k)
	}
	slices.Sort(sorted)
	// The lock and the deletion leave with the next statement that needs an
	// answer (a pipeTx), which the server runs after them.
	if err := queueExec(ctx, tx, `SELECT pg_advisory_xact_lock(hashtextextended('etchlog-drift:' || $1 || ':' || k, 0))
		FROM unnest($2::text[]) WITH ORDINALITY AS u(k, n) ORDER BY n`, site, sorted); err != nil {
		return fmt.Errorf("drift lock: %w", err)
	}
	if err := queueExec(ctx, tx, `DELETE FROM flags WHERE site = $1 AND kind = 'drift' AND drift_group = ANY($2)`, site, sorted); err != nil {
		return fmt.Errorf("clear drift flags: %w", err)
	}
	var rows [][]any
	for _, k := range sorted {
		g, family := keys[k], k[:len(driftFamily(k))]
		dc, stored, err := chartState(ctx, tx, site, family, g, k)
		if err != nil {
			return err
		}
		if dc.id == uuid.Nil {
			if coupons == nil { // drawn from the records: no chart without a calibration
				if err := clearChart(ctx, tx, site, k); err != nil {
					return err
				}
			}
			continue
		}
		pts, err := dc.updateChart(ctx, tx, site, k, g, coupons, stored)
		if err != nil {
			return err
		}
		for _, f := range driftFlags(dc.report(g, family, pts), now) {
			rows = append(rows, driftFlagRow(site, f, k))
		}
	}
	if len(rows) == 0 {
		return flushed(ctx, tx)
	}
	_, err := tx.CopyFrom(ctx, pgx.Identifier{"flags"}, append(slices.Clone(flagColumns), "drift_group"), pgx.CopyFromRows(rows))
	if err != nil {
		return fmt.Errorf("write drift flags: %w", mapError(err))
	}
	return nil
}

// driftFlagRow is drift flag f of chart key at site, as a row to copy
// into flags with the column drift_group.
func driftFlagRow(site string, f Flag, key string) []any {
	return []any{site, f.SubjectKind, f.SubjectID, f.SubjectAt, f.ProcedureID, f.RangesVersion, f.Kind,
		f.Variable, f.Unit, f.Value, f.ValueText, f.Min, f.Max, f.Allowed, f.Direction, f.Excess, f.ExcessPct,
		f.Detail, f.ComputedAt, key}
}

// driftFamily is the family part of a drift key.
func driftFamily(key string) string {
	for i := range key {
		if key[i] == '|' {
			return key[:i]
		}
	}
	return key
}

// couponDrift judges the coupons ids again on the chart of every group
// they are or were in (a correction may move one from one group to
// another) and rewrites those charts' drift flags.
func couponDrift(ctx context.Context, tx pgx.Tx, now time.Time, site string, ids ...uuid.UUID) error {
	groups, err := couponGroups(ctx, tx, site, ids)
	if err != nil {
		return err
	}
	return recomputeDrift(ctx, tx, now, site, groups, ids)
}

// couponGroups are the calibration groups the coupons ids are or were in.
func couponGroups(ctx context.Context, tx pgx.Tx, site string, ids []uuid.UUID) ([]CalibrationGroup, error) {
	rows, _ := tx.Query(ctx, `SELECT DISTINCT coalesce(p.process, r.process, '') AS process, c.joint_type,
			coalesce(nullif(c.shielding_gas, ''), p.shielding_gas, r.shielding_gas, '') AS shielding_gas,
			coalesce(c.wire_diameter_mm, p.wire_diameter_mm, r.wire_diameter_mm, 0) AS wire_diameter_mm
		FROM coupons c
		LEFT JOIN LATERAL (SELECT process, wire_diameter_mm, shielding_gas FROM procedures p WHERE p.site = $1 AND p.id = c.procedure_id
		                   ORDER BY revision DESC LIMIT 1) p ON true
		LEFT JOIN LATERAL (SELECT process, wire_diameter_mm, shielding_gas FROM qualification_records r WHERE r.site = $1 AND r.id = c.qualification_record_id
		                   ORDER BY revision DESC LIMIT 1) r ON true
		WHERE c.site = $1 AND c.id IN (SELECT unnest($2::uuid[]))`, site, ids)
	groups, err := pgx.CollectRows(rows, pgx.RowToStructByName[CalibrationGroup])
	if err != nil {
		return nil, fmt.Errorf("groups of coupons: %w", err)
	}
	return groups, nil
}

// importDrift is couponDrift for the coupons an import part wrote, unless
// no calibration was ever chosen at the site (then no chart can hold them).
func importDrift(ctx context.Context, tx pgx.Tx, now time.Time, site string, ids []uuid.UUID) error {
	var chosen bool
	if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM calibration_activations WHERE site = $1)`, site).Scan(&chosen); err != nil {
		return fmt.Errorf("calibrations chosen: %w", err)
	}
	if !chosen || len(ids) == 0 {
		return nil
	}
	return couponDrift(ctx, tx, now, site, ids...)
}

// siteDrift draws every chart of a group with a calibration in use at the
// site again from the records, and rewrites their flags (after a change
// that may move many coupons, such as a procedure correction, and in
// RecheckFlags).
func siteDrift(ctx context.Context, tx pgx.Tx, now time.Time, site string) error {
	rows, _ := tx.Query(ctx, `SELECT DISTINCT c.process, c.wire_diameter_mm, c.shielding_gas, c.joint_type
		FROM calibrations c WHERE c.site = $1 AND c.id IN (
			SELECT calibration_id FROM calibration_activations WHERE site = $1)`, site)
	groups, err := pgx.CollectRows(rows, pgx.RowToStructByName[CalibrationGroup])
	if err != nil {
		return fmt.Errorf("groups with calibrations: %w", err)
	}
	if _, err := tx.Exec(ctx, `DELETE FROM flags WHERE site = $1 AND kind = 'drift'`, site); err != nil {
		return fmt.Errorf("clear drift flags: %w", err)
	}
	return recomputeDrift(ctx, tx, now, site, groups, nil)
}

// sentence capitalises the first letter of s.
func sentence(s string) string {
	if s == "" || s[0] < 'a' || s[0] > 'z' {
		return s
	}
	return string(s[0]-'a'+'A') + s[1:]
}
