package db

import (
	"context"
	"errors"
	"sync"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// A new coupon is judged by its procedure's latest revision, the latest
// ranges with their staleness, and the activations of its process and
// joint type (couponInputs). Those change seldom and coupons arrive often,
// so a Store keeps what a create read (judgedCache) and the next create of
// the procedure and joint type judges by it without reading it again.
//
// What is kept is never trusted by age. Every change of those inputs, by
// any process, appends a row for the procedure to judgement_changes in its
// own transaction (triggers, migration 000035). A create that reads the
// inputs first reads the procedure's count of such rows, after its shared
// flag lock and before the inputs themselves, and keeps the count with
// them. A create that uses what is kept compares that count in the
// statement that writes the coupon, which runs after the flag lock in a
// snapshot of its own: an unchanged count means no change committed since
// the inputs were read, so they are the inputs as of that statement, as if
// read there. A changed count fails the write (errJudgementChanged);
// CreateCoupon drops what it kept and runs the write again, reading
// afresh. Rows are only ever added (append-only triggers), so a count
// cannot come back to an earlier value.

// judgedKey names what a create keeps: a procedure at a site, for coupons
// of one joint type (the activations read are those of the joint type).
type judgedKey struct {
	site      string
	procedure uuid.UUID
	joint     string
}

// judged is what a create read of its procedure, with the count of the
// procedure's judgement changes read before it.
type judged struct {
	changes     int64
	procedure   Procedure
	ranges      *ProcedureRanges
	activations []groupActivation
	calibrated  bool
	melting     bool
}

// judgedCache is a Store's kept inputs; the zero value is empty.
type judgedCache struct {
	mu sync.Mutex
	m  map[judgedKey]*judged
}

// judgedLimit bounds the kept entries: past it, everything kept is dropped
// and read again as needed.
const judgedLimit = 4096

func (c *judgedCache) get(k judgedKey) *judged {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.m[k]
}

func (c *judgedCache) put(k judgedKey, j *judged) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.m == nil || len(c.m) >= judgedLimit {
		c.m = map[judgedKey]*judged{}
	}
	c.m[k] = j
}

func (c *judgedCache) drop(k judgedKey) {
	c.mu.Lock()
	defer c.mu.Unlock()
	delete(c.m, k)
}

// errJudgementChanged fails a create that judged by kept inputs after a
// change of them committed.
var errJudgementChanged = errors.New("what the procedure's coupons are judged by changed since it was read")

// refuseJudgementChanged is the SQLSTATE with which the statement writing a
// coupon fails when the count is not the kept inputs' (mapError turns it
// into errJudgementChanged).
const refuseJudgementChanged = "EL002"

// judgementChangesSQL counts the judgement changes of procedure $2 at site $1.
const judgementChangesSQL = `SELECT count(*) FROM judgement_changes WHERE site = $1 AND procedure_id = $2`

// judgedCheck is what the statement writing a coupon compares when the
// create judges by kept inputs: the procedure's count of changes.
type judgedCheck struct {
	procedure uuid.UUID
	changes   int64
}

// unchanged reads the count the statement writing the coupon answers: one
// other than the kept inputs' fails the write with errJudgementChanged.
func (c *judgedCheck) unchanged(rows pgx.Rows) error {
	n, err := pgx.CollectOneRow(rows, pgx.RowTo[int64])
	switch {
	case rows.Err() != nil:
		return nil // the statement's own error is reported
	case err != nil:
		return err
	case n != c.changes:
		return errJudgementChanged
	}
	return nil
}

// readChanges reads judgementChangesSQL's count into *dst.
func readChanges(dst **int64) func(pgx.Rows) error {
	return func(rows pgx.Rows) error {
		n, err := pgx.CollectOneRow(rows, pgx.RowTo[int64])
		if rows.Err() != nil {
			return nil // the statement's own error is reported
		}
		if err != nil {
			return err
		}
		*dst = &n
		return nil
	}
}

// keep stores what in read for the procedure and joint type of coupon c,
// when in read it with the count of changes (a create that read afresh).
func (c *judgedCache) keep(in *couponInputs) {
	if in.changes == nil || in.procedure == nil || in.coupon == nil {
		return
	}
	c.put(judgedKey{in.coupon.Site, in.procedure.ID, in.coupon.JointType}, &judged{
		changes: *in.changes, procedure: *in.procedure, ranges: in.ranges,
		activations: in.activations, calibrated: in.calibrated, melting: in.melting,
	})
}

// queueKeptInputs is queueCouponInputs for a new coupon (written, revision
// 1, naming a procedure) whose procedure's inputs j were kept: it reads only
// the qualification record the coupon names; the rest comes from j, and
// in.check asks the write to compare j's count. The same flag lock is
// taken by the coupon row's INSERT (recordedNew, given in.check), before the
// statement after it reads the count.
func queueKeptInputs(ctx context.Context, tx pgx.Tx, written *Coupon, j *judged) (*couponInputs, error) {
	p := j.procedure
	in := &couponInputs{coupon: written, procedure: &p, ranges: j.ranges, activations: j.activations, calibrated: j.calibrated, melting: j.melting,
		check: &judgedCheck{procedure: p.ID, changes: j.changes}}
	if rid := written.QualificationRecordID; rid != nil {
		return in, queueRecordLink(ctx, tx, in, written.Site, *rid)
	}
	return in, nil
}

// queueRecordLink queues the read of qualification record rid a written
// coupon names, refusing the write when it is not there or is voided.
func queueRecordLink(ctx context.Context, tx pgx.Tx, in *couponInputs, site string, rid uuid.UUID) error {
	return queueRows(ctx, tx,
		linked(&in.record, qualificationRecords, "qualification_record_id", rid, func(r *QualificationRecord) bool { return r.Voided }),
		`SELECT `+qualificationRecords.columns()+` FROM qualification_records
		WHERE site = $1 AND id = $2 ORDER BY revision DESC LIMIT 1`, site, rid)
}
