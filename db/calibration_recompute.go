package db

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"slices"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// A change of a group's calibration rewrites its coupons' model flags in
// three parts of one transaction (README, "What an activation guarantees"):
//
//  1. compute, holding no lock a coupon write waits for: after a mark of the
//     log (its last leaf index and its pending leaves), one query streams
//     every current coupon of the group with its sections, the new flags are
//     evaluated in Go and copied into a temporary table, the coupons' stored
//     calibrated flags are noted, and the drift chart's points are read and
//     judged (the coupons the calibration was not fitted to);
//  2. catch up, still without those locks: the coupons logged since the
//     mark (leaves pending or past the mark's index, not pending at the
//     mark) are evaluated again, the mark moved first, in a few rounds;
//  3. reconcile, under the exclusive flag locks of the process's procedures
//     (flag_lock.go), which wait only for the coupon writes in flight: the
//     coupons logged since the last mark are evaluated again, then the old
//     flags are deleted and the new ones inserted with one statement each,
//     and the chart's points and drift flags are stored.
//
// So the flags committed with the activation are those of the calibration
// it makes active, for every coupon of the group as of its commit, while a
// coupon write waits only for part 3.

// groupRecompute is one change of group g's calibration of one family: the
// check its coupons are judged by from now on (nil: none) and the drift
// chart's calibration (nil: none in use).
type groupRecompute struct {
	site   string
	now    time.Time
	g      CalibrationGroup
	family string
	check  *predict.PenetrationCheck // nil: no penetration calibration in use
	drift  *driftCal                 // nil: no chart
	calID  uuid.UUID                 // the chart's calibration (uuid.Nil: none)
	mark   int64                     // the site's last leaf index before part 1
	seen   map[int64]bool            // the site's pending leaves then (their seq)
	// The temporary tables activation_members, activation_flags and
	// activation_old hold the group's coupons, their new flags and the keys
	// of their calibrated flags as stored.
	points []driftPoint
	procs  map[uuid.UUID]*procFlags // per procedure of the process
}

// procFlags is one procedure's flag writer (its ranges' version and
// staleness, which its flags carry) and the minimum penetration its model
// check judges by (its latest revision's).
type procFlags struct {
	w     *flagWriter
	minMM *float64
}

// memberSQL reads the current, non-voided coupons on a current, non-voided
// procedure of process $2 with joint type $3 at site $1 (their wire and gas
// as the flag code reads them, filled from the procedure; compared with the
// group in Go), with their current sections' labels and penetrations in
// section id order. %s restricts to coupons $4 when not empty.
const memberSQL = `
	WITH cur AS (
		SELECT DISTINCT ON (id) id, voided, procedure_id, welded_on, joint_type, current_a, voltage_v,
		       travel_speed_mm_s, wire_diameter_mm, shielding_gas
		FROM coupons WHERE site = $1 %[1]s ORDER BY id, revision DESC),
	proc AS (
		SELECT DISTINCT ON (id) id, voided, process, wire_diameter_mm, shielding_gas
		FROM procedures WHERE site = $1 ORDER BY id, revision DESC),
	sec AS (
		SELECT coupon_id, array_agg(section ORDER BY id) AS labels, array_agg(penetration_mm ORDER BY id) AS pens
		FROM (SELECT DISTINCT ON (id) id, coupon_id, voided, section, penetration_mm
		      FROM measurements WHERE site = $1 %[2]s ORDER BY id, revision DESC) m
		WHERE NOT voided GROUP BY coupon_id)
	SELECT c.id, c.procedure_id, c.welded_on, c.current_a, c.voltage_v, c.travel_speed_mm_s,
	       coalesce(c.wire_diameter_mm, p.wire_diameter_mm) AS wire_diameter_mm,
	       coalesce(nullif(c.shielding_gas, ''), p.shielding_gas) AS shielding_gas,
	       coalesce(s.labels, '{}') AS labels, coalesce(s.pens, '{}') AS pens
	FROM cur c JOIN proc p ON p.id = c.procedure_id
	LEFT JOIN sec s ON s.coupon_id = c.id
	WHERE NOT c.voided AND NOT p.voided AND p.process = $2 AND c.joint_type = $3`

var (
	memberAll = fmt.Sprintf(memberSQL, "", "AND coupon_id IN (SELECT id FROM coupons WHERE site = $1 AND joint_type = $3)")
	memberOf  = fmt.Sprintf(memberSQL, "AND id IN (SELECT unnest($4::uuid[]))", "AND coupon_id IN (SELECT unnest($4::uuid[]))")
)

// member is one row of memberSQL.
type member struct {
	ID             uuid.UUID `db:"id"`
	ProcedureID    uuid.UUID `db:"procedure_id"`
	WeldedOn       Date      `db:"welded_on"`
	CurrentA       float64   `db:"current_a"`
	VoltageV       float64   `db:"voltage_v"`
	TravelSpeed    float64   `db:"travel_speed_mm_s"`
	WireDiameterMM float64   `db:"wire_diameter_mm"`
	ShieldingGas   string    `db:"shielding_gas"`
	Labels         []string  `db:"labels"`
	Pens           []float64 `db:"pens"`
}

// evaluate streams the members query and queues each group member's
// calibrated flags in its procedure's writer; it returns the members seen.
// Memory holds the flags and ids, not the rows.
func (r *groupRecompute) evaluate(ctx context.Context, tx pgx.Tx, query string, args ...any) ([]uuid.UUID, error) {
	if err := r.readProcedures(ctx, tx); err != nil {
		return nil, err
	}
	rows, err := tx.Query(ctx, query, args...)
	if err != nil {
		return nil, fmt.Errorf("coupons of calibration group: %w", err)
	}
	defer rows.Close()
	var ids []uuid.UUID
	var secs []predict.Section
	scan := pgx.RowToAddrOfStructByName[member]
	for rows.Next() {
		m, err := scan(rows)
		if err != nil {
			return nil, err
		}
		if !r.g.has(r.g.Process, m.WireDiameterMM, m.ShieldingGas, r.g.JointType) {
			continue // nominal wire size and gas composition are compared here, not in SQL
		}
		pf := r.procs[m.ProcedureID]
		if pf == nil {
			return nil, fmt.Errorf("procedure %s of coupon %s: %w", m.ProcedureID, m.ID, ErrNotFound)
		}
		ids = append(ids, m.ID)
		secs = secs[:0]
		for k := range m.Pens {
			secs = append(secs, predict.Section{Label: m.Labels[k], PenetrationMM: m.Pens[k]})
		}
		var check *predict.PenetrationCheck
		if r.check != nil {
			c := *r.check
			c.MinPenetrationMM = pf.minMM
			check = &c
		}
		c := Coupon{Meta: Meta{ID: m.ID}, CouponData: CouponData{WeldedOn: m.WeldedOn, CurrentA: m.CurrentA,
			VoltageV: m.VoltageV, TravelSpeedMMPerS: m.TravelSpeed}}
		pf.w.addCalibrated(newCouponSubject(c, secs, nil, check))
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("coupons of calibration group: %w", err)
	}
	return ids, nil
}

// readProcedures reads, for every procedure that ever had the group's
// process, its latest revision (the minimum penetration its model check
// judges by) and ranges (their version and staleness, which its flags carry).
func (r *groupRecompute) readProcedures(ctx context.Context, tx pgx.Tx) error {
	if r.procs != nil { // read once per pass over the group
		return nil
	}
	rows, _ := tx.Query(ctx, `SELECT DISTINCT id FROM procedures WHERE site = $1 AND process = $2`, r.site, r.g.Process)
	ids, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
	if err != nil {
		return fmt.Errorf("procedures of %s: %w", r.g.Process, err)
	}
	r.procs = make(map[uuid.UUID]*procFlags, len(ids))
	for _, id := range ids {
		p, err := getRecord[Procedure](ctx, tx, procedures, r.site, id, 0)
		if err != nil {
			return err
		}
		pr, err := latestRanges(ctx, tx, r.site, id, 0)
		if errors.Is(err, ErrNotFound) { // no ranges yet: model flags only
			pr, err = ProcedureRanges{Site: r.site, ProcedureID: id}, nil
		}
		if err != nil {
			return err
		}
		r.procs[id] = &procFlags{w: newFlagWriter(r.site, r.now, pr), minMM: p.MinPenetrationMM}
	}
	return nil
}

// copyQueued copies every queued flag into the temporary table activation_flags.
func (r *groupRecompute) copyQueued(ctx context.Context, tx pgx.Tx) error {
	var fs []Flag
	for _, pf := range r.procs {
		fs = append(fs, pf.w.flags...)
		pf.w.flags = pf.w.flags[:0]
	}
	if len(fs) == 0 {
		return nil
	}
	i := 0
	_, err := tx.CopyFrom(ctx, pgx.Identifier{"activation_flags"}, flagColumns, pgx.CopyFromFunc(func() ([]any, error) {
		if i == len(fs) {
			return nil, nil
		}
		f := &fs[i]
		i++
		return []any{r.site, f.SubjectKind, f.SubjectID, f.SubjectAt, f.ProcedureID, f.RangesVersion, f.Kind,
			f.Variable, f.Unit, f.Value, f.ValueText, f.Min, f.Max, f.Allowed, f.Direction, f.Excess, f.ExcessPct,
			f.Detail, f.ComputedAt}, nil
	}))
	return err
}

// copyIDs copies ids into the temporary table activation_members and
// notes their calibrated flags as stored now in activation_old (the rows
// the swap deletes by key: a flag of theirs written later is a write of
// the coupon, so it is evaluated again and this is read again).
func copyIDs(ctx context.Context, tx pgx.Tx, site string, ids []uuid.UUID) error {
	if len(ids) == 0 {
		return nil
	}
	_, err := tx.CopyFrom(ctx, pgx.Identifier{"activation_members"}, []string{"id"}, pgx.CopyFromSlice(len(ids),
		func(i int) ([]any, error) { return []any{ids[i]}, nil }))
	if err != nil {
		return err
	}
	_, err = tx.Exec(ctx, `INSERT INTO activation_old (subject_id, variable, kind)
		SELECT subject_id, variable, kind FROM flags
		WHERE site = $1 AND subject_kind = 'coupon' AND subject_id IN (SELECT unnest($2::uuid[])) AND `+calibratedFlags, site, ids)
	return err
}

// compute is part 1: no lock a coupon write takes. It reads the log's mark
// first, so that every coupon written after the members' snapshot is
// pending or logged past it, and not pending at it.
func (r *groupRecompute) compute(ctx context.Context, tx pgx.Tx) error {
	if err := r.readMark(ctx, tx); err != nil {
		return err
	}
	activationStep(r.site, "marked")
	for _, q := range []string{
		`CREATE TEMP TABLE activation_members (id uuid PRIMARY KEY) ON COMMIT DROP`,
		`CREATE TEMP TABLE activation_flags (LIKE flags) ON COMMIT DROP`,
		`CREATE TEMP TABLE activation_old (subject_id uuid, variable text, kind text) ON COMMIT DROP`,
	} {
		if _, err := tx.Exec(ctx, q); err != nil {
			return fmt.Errorf("activation tables: %w", err)
		}
	}
	if r.family == CalibrationJacksonFixed.Family() { // a melting calibration judges no coupon flag
		if err := r.judge(ctx, tx, memberAll, r.site, r.g.Process, r.g.JointType); err != nil {
			return err
		}
	}
	// The chart's calibration and points are read in this transaction too,
	// after the mark, so that what it misses is reconciled like the members.
	// Not on a connection of its own: this transaction holds its tables'
	// locks while it waits, so a lock request queued between the two (a
	// TRUNCATE or ALTER TABLE of one of them) would leave both waiting for
	// ever, where PostgreSQL's deadlock check cannot see it. The coupons the
	// calibration was fitted to are left out by the query (calibration_fitted,
	// stored when the calibration was created, or derived here once for an
	// older one), so only the coupons on the chart are read with their
	// procedures and sections.
	if r.calID == uuid.Nil {
		return nil
	}
	dc, err := driftCalibration(ctx, tx, r.site, r.calID)
	if err != nil {
		return err
	}
	if err := ensureFitted(ctx, tx, r.site, r.calID); err != nil {
		return err
	}
	pts, err := dc.readDriftPoints(ctx, tx, r.g, driftCoupons, r.site)
	if err != nil {
		return err
	}
	r.drift, r.points = &dc, pts
	return nil
}

// judge evaluates the coupons query gives (memberAll or memberOf, with
// args) and copies the members and their flags into the activation's
// tables.
func (r *groupRecompute) judge(ctx context.Context, tx pgx.Tx, query string, args ...any) error {
	ids, err := r.evaluate(ctx, tx, query, args...)
	if err != nil {
		return err
	}
	if err := copyIDs(ctx, tx, r.site, ids); err != nil {
		return fmt.Errorf("group members: %w", err)
	}
	if err := r.copyQueued(ctx, tx); err != nil {
		return fmt.Errorf("group flags: %w", mapError(err))
	}
	return nil
}

// evaluateAll redoes part 1's reads under the lock.
func (r *groupRecompute) evaluateAll(ctx context.Context, tx pgx.Tx) error {
	if r.family == CalibrationJacksonFixed.Family() {
		if err := r.judge(ctx, tx, memberAll, r.site, r.g.Process, r.g.JointType); err != nil {
			return err
		}
	}
	if r.drift != nil {
		var err error
		r.points, err = r.drift.readDriftPoints(ctx, tx, r.g, driftCoupons, r.site)
		return err
	}
	return nil
}

// evaluateChanged evaluates the changed coupons again: those now in the
// group replace their part-1 flags (or join), those no longer in it leave
// the members, whose flags the swap rewrites.
func (r *groupRecompute) evaluateChanged(ctx context.Context, tx pgx.Tx, changed []uuid.UUID) error {
	if r.family == CalibrationJacksonFixed.Family() {
		for _, q := range []string{`DELETE FROM activation_flags WHERE subject_id IN (SELECT unnest($1::uuid[]))`,
			`DELETE FROM activation_members WHERE id IN (SELECT unnest($1::uuid[]))`,
			`DELETE FROM activation_old WHERE subject_id IN (SELECT unnest($1::uuid[]))`} {
			if _, err := tx.Exec(ctx, q, changed); err != nil {
				return err
			}
		}
		if err := r.judge(ctx, tx, memberOf, r.site, r.g.Process, r.g.JointType, changed); err != nil {
			return err
		}
	}
	if r.drift != nil {
		fresh, err := r.drift.readDriftPoints(ctx, tx, r.g, driftCouponsOf, r.site, changed)
		if err != nil {
			return err
		}
		r.points = mergePoints(r.points, changed, fresh)
	}
	return nil
}

// mergePoints replaces the points of the changed coupons (sorted ids) by
// fresh ones, keeping driftCoupons' order: welding day, then coupon id.
func mergePoints(pts []driftPoint, changed []uuid.UUID, fresh []driftPoint) []driftPoint {
	out := make([]driftPoint, 0, len(pts)+len(fresh))
	before := func(a, b *driftRow) bool {
		if c := a.WeldedOn.Compare(b.WeldedOn.Time); c != 0 {
			return c < 0
		}
		return bytes.Compare(a.ID[:], b.ID[:]) < 0
	}
	j := 0
	for i := range pts {
		if _, gone := slices.BinarySearchFunc(changed, pts[i].row.ID, func(a, b uuid.UUID) int { return bytes.Compare(a[:], b[:]) }); gone {
			continue
		}
		for j < len(fresh) && before(&fresh[j].row, &pts[i].row) {
			out = append(out, fresh[j])
			j++
		}
		out = append(out, pts[i])
	}
	return append(out, fresh[j:]...)
}

// redraw rewrites the drift flags and stored points of the group's chart
// of this family under the chart's lock (taken after the flag locks, as
// every write does).
func (r *groupRecompute) redraw(ctx context.Context, tx pgx.Tx) error {
	key := driftKey(r.family, r.g)
	if _, err := tx.Exec(ctx, `SELECT pg_advisory_xact_lock(hashtextextended('etchlog-drift:' || $1 || ':' || $2, 0))`, r.site, key); err != nil {
		return fmt.Errorf("drift lock: %w", err)
	}
	if _, err := tx.Exec(ctx, `DELETE FROM flags WHERE site = $1 AND kind = 'drift' AND drift_group = $2`, r.site, key); err != nil {
		return fmt.Errorf("clear drift flags: %w", err)
	}
	if r.drift == nil {
		return clearChart(ctx, tx, r.site, key)
	}
	if err := storeChart(ctx, tx, r.site, key, r.drift.id, r.points); err != nil {
		return err
	}
	rep := r.drift.report(r.g, r.family, r.points)
	var rows [][]any
	for _, f := range driftFlags(rep, r.now) {
		rows = append(rows, driftFlagRow(r.site, f, key))
	}
	if len(rows) == 0 {
		return nil
	}
	if _, err := tx.CopyFrom(ctx, pgx.Identifier{"flags"}, append(slices.Clone(flagColumns), "drift_group"), pgx.CopyFromRows(rows)); err != nil {
		return fmt.Errorf("write drift flags: %w", mapError(err))
	}
	return nil
}
