package db

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// Flags are recomputed inside the transaction of the write that changes what
// they derive from, so a reader never sees flags that disagree with the
// records: a change of ranges rewrites every flag of the procedure, a coupon
// write rewrites that coupon's flags, a production batch writes its rows'.
// Each write method calls the step it needs explicitly, after appending to
// the log. Each such transaction holds the flag locks of the procedures
// concerned (flag_lock.go), so an evaluation never races a change of ranges.

// couponFlags is the step that rewrites the flags of coupon m.ID from its
// latest revision.
func couponFlags(ctx context.Context, m Meta) step {
	return func(tx pgx.Tx) error {
		if _, err := recomputeCoupon(ctx, tx, m.CreatedAt, m.Site, m.ID); err != nil {
			return err
		}
		return couponDrift(ctx, tx, m.CreatedAt, m.Site, m.ID)
	}
}

// measuredCouponFlags is the step that rewrites the flags of the coupon that
// measurement m.ID belongs to: a section changes its measured penetration.
func measuredCouponFlags(ctx context.Context, m Meta) step {
	return func(tx pgx.Tx) error {
		id, err := measurementCoupon(ctx, tx, m.Site, m.ID)
		if err != nil {
			return err
		}
		if _, err = recomputeCoupon(ctx, tx, m.CreatedAt, m.Site, id); err != nil {
			return err
		}
		return couponDrift(ctx, tx, m.CreatedAt, m.Site, id)
	}
}

// procedureFlags is the step that re-evaluates every flag of procedure m.ID
// after a correction: model flags read its required minimum penetration.
// (A new procedure has no coupons or production records yet, so creating
// one has no flag step.)
func procedureFlags(ctx context.Context, m Meta) step {
	return func(tx pgx.Tx) error {
		if err := lockProcedures(ctx, tx, m.Site, []uuid.UUID{m.ID}, true); err != nil {
			return err
		}
		pr, err := latestRanges(ctx, tx, m.Site, m.ID, 0)
		if errors.Is(err, ErrNotFound) { // no ranges yet: model flags only, as for a coupon write
			pr, err = ProcedureRanges{Site: m.Site, ProcedureID: m.ID}, nil
		}
		if err != nil {
			return err
		}
		if _, err = recomputeProcedure(ctx, tx, m.CreatedAt, pr); err != nil {
			return err
		}
		// A correction of the procedure's process, wire or gas moves its coupons between groups.
		return siteDrift(ctx, tx, m.CreatedAt, m.Site)
	}
}

// dropProcedureFlags is the step that removes every flag of voided procedure
// m.ID: its records no longer answer to it.
func dropProcedureFlags(ctx context.Context, m Meta) step {
	return func(tx pgx.Tx) error {
		if err := lockProcedures(ctx, tx, m.Site, []uuid.UUID{m.ID}, true); err != nil {
			return err
		}
		_, err := tx.Exec(ctx, `DELETE FROM flags WHERE site = $1 AND procedure_id = $2 AND kind <> 'drift'`, m.Site, m.ID)
		return err
	}
}

// recomputeProcedure rewrites every flag of a procedure under ranges pr:
// its current, non-voided coupons and all its production records.
func recomputeProcedure(ctx context.Context, tx pgx.Tx, now time.Time, pr ProcedureRanges) (int, error) {
	if _, err := tx.Exec(ctx, `DELETE FROM flags WHERE site = $1 AND procedure_id = $2 AND kind <> 'drift'`, pr.Site, pr.ProcedureID); err != nil {
		return 0, fmt.Errorf("clear flags: %w", err)
	}
	w := newFlagWriter(pr.Site, now, pr)
	rows, _ := tx.Query(ctx, procedureCouponsSQL, pr.Site, pr.ProcedureID)
	cs, err := pgx.CollectRows(rows, pgx.RowToStructByName[Coupon])
	if err != nil {
		return 0, fmt.Errorf("read coupons: %w", err)
	}
	p, err := getRecord[Procedure](ctx, tx, procedures, pr.Site, pr.ProcedureID, 0)
	if err != nil {
		return 0, err
	}
	for i := range cs {
		sub, err := couponSubject(ctx, tx, pr.Site, cs[i], p)
		if err != nil {
			return 0, err
		}
		w.add(sub)
	}
	if err := evaluateProduction(ctx, tx, w); err != nil {
		return 0, err
	}
	return w.flush(ctx, tx)
}

// evaluateProduction queues the flags of every production record of w's procedure.
func evaluateProduction(ctx context.Context, tx pgx.Tx, w *flagWriter) error {
	rows, err := tx.Query(ctx, `SELECT id, recorded_at, current_a, voltage_v, travel_speed_mm_s,
			wire_feed_speed_m_min, ctwd_mm
		FROM production_records WHERE site = $1 AND procedure_id = $2`, w.site, w.ranges.ProcedureID)
	if err != nil {
		return fmt.Errorf("read production records: %w", err)
	}
	defer rows.Close()
	var s subject
	var r ProductionRecordData
	s.kind = SubjectProductionRecord
	for rows.Next() {
		r.CTWDMM = nil
		if err := rows.Scan(&s.id, &s.at, &r.CurrentA, &r.VoltageV, &r.TravelSpeedMMPerS, &r.WireFeedSpeedMPerMin, &r.CTWDMM); err != nil {
			return err
		}
		s.obs = productionObservation(r)
		w.add(&s)
	}
	return rows.Err()
}

// currentCouponsNaming reads columns of the current, non-voided coupons at
// site $1 whose current revision names $2 in column (and meets more): the
// coupons that ever named it, found through the column's index, each one's
// latest revision by its key, so the read costs those coupons, not the
// site's (TestRecordRecomputeReadsByIndex).
func currentCouponsNaming(columns, column, more string) string {
	return `SELECT ` + columns + `
	FROM (SELECT DISTINCT id FROM coupons WHERE site = $1 AND ` + column + ` = $2) ever
	CROSS JOIN LATERAL (SELECT ` + coupons.columns() + ` FROM coupons
		WHERE site = $1 AND id = ever.id ORDER BY revision DESC LIMIT 1) cur
	WHERE NOT cur.voided AND cur.` + column + ` = $2` + more + `
	ORDER BY cur.id`
}

// procedureCouponsSQL reads the current, non-voided coupons of the
// procedure $2 at site $1 (through coupons_procedure).
var procedureCouponsSQL = currentCouponsNaming(prefixed("cur.", coupons.columns()), "procedure_id", "")

// recordCouponsSQL finds the current, non-voided coupons that name the
// qualification record $2 and belong to none of the procedures $3, whose
// coupons the procedures' recompute judges anyway (through
// coupons_qualification_record).
var recordCouponsSQL = currentCouponsNaming("cur.id", "qualification_record_id", " AND NOT (cur.procedure_id = ANY($3))")

// recordFlags is the step that keeps flags in step with a corrected or
// voided qualification record: the procedures it supports are re-evaluated
// (their ranges may now be stale, and their flags say so), and so are the
// other coupons that name it (its acceptance criterion applies to their
// sections).
func recordFlags(ctx context.Context, m Meta) step {
	return func(tx pgx.Tx) error {
		rows, _ := tx.Query(ctx, `SELECT id FROM (
				SELECT DISTINCT ON (id) id, voided, supporting_record_ids FROM procedures
				WHERE site = $1 ORDER BY id, revision DESC) cur
			WHERE NOT voided AND $2 = ANY(supporting_record_ids)`, m.Site, m.ID)
		procs, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
		if err != nil {
			return fmt.Errorf("procedures supported by %s: %w", m.ID, err)
		}
		for _, p := range procs {
			if err := procedureFlags(ctx, Meta{Site: m.Site, ID: p, CreatedAt: m.CreatedAt})(tx); err != nil {
				return err
			}
		}
		rows, _ = tx.Query(ctx, recordCouponsSQL, m.Site, m.ID, procs)
		cs, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
		if err != nil {
			return fmt.Errorf("coupons of %s: %w", m.ID, err)
		}
		for _, c := range cs {
			if _, err := recomputeCoupon(ctx, tx, m.CreatedAt, m.Site, c); err != nil {
				return err
			}
		}
		return nil
	}
}
