package db

import (
	"context"
	"slices"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// Flags derive from records, ranges and active calibrations, and are
// rewritten in the transaction of the write that changes them. Writes that
// flag one coupon or production record hold a shared lock on its procedure;
// writes that change what a procedure's records are judged by (its ranges,
// its revision, an active calibration of its process) hold that procedure's
// lock exclusively. Record writes never wait for one another, only for a
// change of judgement on the same procedure, and a re-evaluation never
// misses a record written beside it. Locks are taken in id order so two
// transactions cannot wait on each other in a cycle.

// lockProcedures takes the flag lock of each procedure, shared or exclusive.
func lockProcedures(ctx context.Context, tx pgx.Tx, site string, ids []uuid.UUID, exclusive bool) error {
	if len(ids) == 0 {
		return nil
	}
	sql, args := procedureLocks(site, ids, exclusive)
	_, err := tx.Exec(ctx, sql, args...)
	return err
}

// queueLockProcedures is lockProcedures queued: on a pipelined write the
// locks leave with the write's next statement, and are held before it runs.
func queueLockProcedures(ctx context.Context, tx pgx.Tx, site string, ids []uuid.UUID, exclusive bool) error {
	if len(ids) == 0 {
		return nil
	}
	sql, args := procedureLocks(site, ids, exclusive)
	return queueExec(ctx, tx, sql, args...)
}

// procedureLocks is the statement taking the flag locks of the procedures
// ids, in byte order of their ids, and its arguments.
func procedureLocks(site string, ids []uuid.UUID, exclusive bool) (string, []any) {
	ids = slices.Clone(ids)
	slices.SortFunc(ids, func(a, b uuid.UUID) int { return slices.Compare(a[:], b[:]) })
	ids = slices.Compact(ids)
	fn := "pg_advisory_xact_lock_shared"
	if exclusive {
		fn = "pg_advisory_xact_lock"
	}
	return `SELECT ` + fn + `(` + flagLockKey("$1", "p") + `)
		FROM unnest($2::uuid[]) WITH ORDINALITY AS u(p, n) ORDER BY n`, []any{site, ids}
}

// flagLockKey is the advisory lock key of a procedure's flag lock, from SQL
// expressions for the site (text) and the procedure's id (uuid). Every
// statement taking a flag lock names it through this.
func flagLockKey(site, procedure string) string {
	return `hashtextextended('etchlog-flags:' || ` + site + ` || ':' || ` + procedure + `::text, 0)`
}

// lockCouponProcedures takes the shared flag lock of every procedure the
// coupon ($2, at site $1) names in any revision (a correction may move it to
// another). One statement: the procedures in byte order of their ids, as
// lockProcedures orders them, so the two never wait on each other in a
// cycle; volatile target functions run after the sort.
var lockCouponProcedures = `SELECT pg_advisory_xact_lock_shared(` + flagLockKey("$1", "p") + `)
	FROM (SELECT DISTINCT procedure_id AS p FROM coupons
	      WHERE site = $1 AND id = $2 AND procedure_id IS NOT NULL) ids
	ORDER BY p`

// lockProcess takes the exclusive flag lock of every procedure of a process
// at the site, before an activation changes the model its coupons answer to.
func lockProcess(ctx context.Context, tx pgx.Tx, site, process string) error {
	rows, _ := tx.Query(ctx, `SELECT DISTINCT id FROM procedures WHERE site = $1 AND process = $2`, site, process)
	ids, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
	if err != nil {
		return err
	}
	return lockProcedures(ctx, tx, site, ids, true)
}

// lockGroup serialises the choice of calibration for one model family and
// calibration group at a site: two activations of the same group never
// interleave, while writes to other groups and all record writes go on.
func lockGroup(ctx context.Context, tx pgx.Tx, site, family string, g CalibrationGroup) error {
	g = g.canonical()
	_, err := tx.Exec(ctx, `SELECT pg_advisory_xact_lock(hashtextextended(
		concat_ws(chr(31), 'etchlog-calibration-group', $1::text, $2::text, $3::text, round($4::numeric, 3)::text, $5::text, $6::text), 0))`,
		site, family, g.Process, g.WireDiameterMM, g.ShieldingGas, g.JointType)
	return err
}
