package db

import (
	"context"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"
	"github.com/jackc/pgx/v5/pgxpool"
)

// A write waits for PostgreSQL as seldom as its statements' dependencies
// allow. Every write runs in a pipeTx (Store.tx): BEGIN is not a round trip
// of its own but leaves with the transaction's first statements; a step may
// queue statements whose answers it reads later (queueRows, queueExec), and
// they leave together with the next statement whose answer is needed at
// once, or with COMMIT. The server still runs them one after another in the
// order they were queued, each with its own snapshot, exactly as if they
// were sent one at a time: only the waiting between them is gone.
//
// A statement's reader may refuse what it reads (a missing procedure, a
// mark held by another record); that error, or a statement's own, is
// reported by the next flush, the earliest in queue order first, and fails
// the write. COMMIT never leaves in the same batch as a reader that could
// still refuse: Commit flushes those first.

// pipeTx is a write transaction on one pooled connection. It satisfies
// pgx.Tx, so a step written for a plain transaction works unchanged: Exec
// sends what is queued with it, Query and CopyFrom send the queue first,
// QueryRow waits until its row is scanned and then leaves with the queue.
type pipeTx struct {
	pgx.Tx // the transaction, once BEGIN has been sent
	conn   *pgxpool.Conn
	next   *pipeBatch
	err    error // a refusal reported to a step that did not ask: the write must fail
	done   bool  // committed
	// A step queued the request's token check inside its own statement
	// (carriedUserCheck).
	userChecked bool
}

// pipeBatch is what leaves in one round trip: the statements and, per
// statement, what it or its reader reported.
type pipeBatch struct {
	b        pgx.Batch
	errs     []error
	checking bool // some reader may refuse: COMMIT may not leave with it
}

func newPipeTx(conn *pgxpool.Conn) *pipeTx {
	t := &pipeTx{conn: conn, next: &pipeBatch{}}
	t.next.b.BeginTx(pgx.TxOptions{})
	t.next.errs = append(t.next.errs, nil)
	return t
}

// queue adds a statement to the next batch. read, when not nil, reads its
// rows when they arrive (a pipeTx runs it during a flush: it may queue
// further statements, which leave with the batch after). owned marks a
// reader whose own refusal goes only to the step waiting for it.
func (t *pipeTx) queue(sql string, args []any, read func(pgx.Rows) error, owned bool) {
	t.queueWith(sql, args, read, owned, mapError)
}

// queueMapped queues a statement without a reader whose error mapErr maps.
func (t *pipeTx) queueMapped(sql string, args []any, mapErr func(error) error) {
	t.queueWith(sql, args, nil, false, mapErr)
}

func (t *pipeTx) queueWith(sql string, args []any, read func(pgx.Rows) error, owned bool, mapErr func(error) error) {
	t.queueReader(sql, args, read, owned, read != nil && !owned, mapErr)
}

// queueReader queues a statement; checking says its reader may refuse what
// the statement answered, so COMMIT may not leave with it.
func (t *pipeTx) queueReader(sql string, args []any, read func(pgx.Rows) error, owned, checking bool, mapErr func(error) error) {
	p := t.next
	i := len(p.errs)
	p.errs = append(p.errs, nil)
	p.checking = p.checking || checking
	qq := p.b.Queue(sql, args...)
	qq.Fn = func(br pgx.BatchResults) error {
		if read == nil {
			if _, err := br.Exec(); err != nil {
				p.errs[i] = mapErr(err)
				t.err = p.errs[i]
				return err
			}
			return nil
		}
		rows, err := br.Query()
		if err != nil {
			rows.Close()
			p.errs[i] = mapErr(err)
			t.err = p.errs[i]
			return err
		}
		rerr := read(rows)
		rows.Close()
		if err := rows.Err(); err != nil { // the statement failed: the server skips the rest
			p.errs[i] = mapErr(err)
			t.err = p.errs[i]
			return err
		}
		if rerr != nil && !owned {
			p.errs[i], t.err = rerr, rerr
		}
		return nil // a refusal read from good rows: the later statements' answers still arrive
	}
}

// flush sends the queued statements (with BEGIN, the first time) and runs
// their readers; it returns the earliest error in queue order, or the
// refusal an earlier flush reported to a step that did not ask for it.
func (t *pipeTx) flush(ctx context.Context) error {
	p := t.next
	if p.b.Len() == 0 {
		return t.err
	}
	t.next = &pipeBatch{}
	var br pgx.BatchResults
	if t.Tx == nil {
		br = t.conn.SendBatch(ctx, &p.b)
		t.Tx = br.Tx()
	} else {
		br = t.Tx.SendBatch(ctx, &p.b)
	}
	err := br.Close()
	for _, e := range p.errs {
		if e != nil {
			return e
		}
	}
	if err != nil { // before any statement ran: the batch could not be prepared or sent
		t.err = mapError(err)
	}
	return t.err
}

// begun sends BEGIN and whatever is queued, so the plain transaction can be used.
func (t *pipeTx) begun(ctx context.Context) error { return t.flush(ctx) }

// Exec sends the statement with everything queued before it.
func (t *pipeTx) Exec(ctx context.Context, sql string, args ...any) (pgconn.CommandTag, error) {
	var tag pgconn.CommandTag
	t.queue(sql, args, func(rows pgx.Rows) error {
		for rows.Next() {
		}
		tag = rows.CommandTag()
		return nil
	}, true)
	return tag, t.flush(ctx)
}

// Query sends the queue, then the query.
func (t *pipeTx) Query(ctx context.Context, sql string, args ...any) (pgx.Rows, error) {
	if err := t.begun(ctx); err != nil {
		return errRows{err}, err
	}
	return t.Tx.Query(ctx, sql, args...)
}

// errRows are the rows of a query that was never sent, as pgx's own Query
// returns them: every caller may read them and find the error.
type errRows struct{ err error }

func (r errRows) Close()                                       {}
func (r errRows) Err() error                                   { return r.err }
func (r errRows) CommandTag() pgconn.CommandTag                { return pgconn.CommandTag{} }
func (r errRows) FieldDescriptions() []pgconn.FieldDescription { return nil }
func (r errRows) Next() bool                                   { return false }
func (r errRows) Scan(...any) error                            { return r.err }
func (r errRows) Values() ([]any, error)                       { return nil, r.err }
func (r errRows) RawValues() [][]byte                          { return nil }
func (r errRows) Conn() *pgx.Conn                              { return nil }
func (r errRows) TypeMap() *pgtype.Map                         { return nil }

// QueryRow returns a row whose Scan sends the statement with the queue.
func (t *pipeTx) QueryRow(ctx context.Context, sql string, args ...any) pgx.Row {
	return &pipeRow{t: t, ctx: ctx, sql: sql, args: args}
}

// CopyFrom sends the queue, then the COPY.
func (t *pipeTx) CopyFrom(ctx context.Context, table pgx.Identifier, cols []string, src pgx.CopyFromSource) (int64, error) {
	if err := t.begun(ctx); err != nil {
		return 0, err
	}
	return t.Tx.CopyFrom(ctx, table, cols, src)
}

// SendBatch sends the queue, then the batch.
func (t *pipeTx) SendBatch(ctx context.Context, b *pgx.Batch) pgx.BatchResults {
	if err := t.begun(ctx); err != nil {
		return pgx.FailedBatchResults(b, err)
	}
	return t.Tx.SendBatch(ctx, b)
}

// Prepare sends the queue, then prepares.
func (t *pipeTx) Prepare(ctx context.Context, name, sql string) (*pgconn.StatementDescription, error) {
	if err := t.begun(ctx); err != nil {
		return nil, err
	}
	return t.Tx.Prepare(ctx, name, sql)
}

// Begin sends the queue, then starts a savepoint.
func (t *pipeTx) Begin(ctx context.Context) (pgx.Tx, error) {
	if err := t.begun(ctx); err != nil {
		return nil, err
	}
	return t.Tx.Begin(ctx)
}

// Conn is the connection the transaction runs on.
func (t *pipeTx) Conn() *pgx.Conn { return t.conn.Conn() }

// Commit sends COMMIT with the statements still queued; a queued reader that
// may refuse is answered first, in a round trip of its own, and so is any
// such reader that one queues in turn.
func (t *pipeTx) Commit(ctx context.Context) error {
	if t.done {
		return pgx.ErrTxClosed
	}
	for t.next.checking { // a reader may queue another that may refuse
		if err := t.flush(ctx); err != nil {
			return err
		}
	}
	if t.err != nil {
		return t.err
	}
	var rolledBack bool
	t.queue("commit", nil, func(rows pgx.Rows) error {
		for rows.Next() {
		}
		rolledBack = rows.CommandTag().String() == "ROLLBACK"
		return nil
	}, true)
	err := t.flush(ctx)
	if t.Tx != nil && t.conn.Conn().PgConn().TxStatus() == 'I' {
		t.done = true // the transaction ended, committed or not
	}
	if err == nil && rolledBack {
		err = pgx.ErrTxCommitRollback
	}
	return err
}

// Rollback ends a transaction that did not commit; one never begun sent nothing.
func (t *pipeTx) Rollback(ctx context.Context) error {
	if t.done || t.Tx == nil {
		return nil
	}
	t.done = true
	return t.Tx.Rollback(ctx)
}

// pipeRow is QueryRow's answer on a pipeTx: the statement leaves when the
// row is scanned, together with what is queued before it.
type pipeRow struct {
	t    *pipeTx
	ctx  context.Context
	sql  string
	args []any
}

// Scan sends the statement and scans its first row (pgx.ErrNoRows when none).
func (r *pipeRow) Scan(dest ...any) error {
	var own error
	r.t.queue(r.sql, r.args, func(rows pgx.Rows) error {
		if !rows.Next() {
			if rows.Err() == nil {
				own = pgx.ErrNoRows
			}
			return own
		}
		own = rows.Scan(dest...)
		return own
	}, true)
	if err := r.t.flush(r.ctx); err != nil {
		return err
	}
	return own
}

// queueRows runs sql on tx and hands its rows to read: on a pipeTx it is
// queued, read runs when the next flush brings the answer, and an error read
// returns fails the write there; on a plain transaction it runs now.
func queueRows(ctx context.Context, tx pgx.Tx, read func(pgx.Rows) error, sql string, args ...any) error {
	if t, ok := tx.(*pipeTx); ok {
		t.queue(sql, args, read, false)
		return nil
	}
	rows, err := tx.Query(ctx, sql, args...)
	if err != nil {
		return mapError(err)
	}
	rerr := read(rows)
	rows.Close()
	if err := rows.Err(); err != nil {
		return mapError(err)
	}
	return rerr
}

// queueEnforced is queueRows for a statement that enforces its condition
// itself, failing (and so aborting the transaction) when it does not hold:
// its reader only reads the answer, and COMMIT may leave in the same round
// trip. The reader must refuse nothing its statement would have let
// through (UserCheck.confirmRow and judgedCheck.unchanged compare what the
// statement already compared): a refusal read from good rows is still
// reported, but COMMIT may already have run in the same round trip.
func queueEnforced(ctx context.Context, tx pgx.Tx, read func(pgx.Rows) error, sql string, args ...any) error {
	if t, ok := tx.(*pipeTx); ok {
		t.queueReader(sql, args, read, false, false, mapError)
		return nil
	}
	return queueRows(ctx, tx, read, sql, args...)
}

// queueExecMapped is queueExec with its own mapping of the statement's
// error (mapError for the others).
func queueExecMapped(ctx context.Context, tx pgx.Tx, mapErr func(error) error, sql string, args ...any) error {
	if t, ok := tx.(*pipeTx); ok {
		t.queueMapped(sql, args, mapErr)
		return nil
	}
	_, err := tx.Exec(ctx, sql, args...)
	if err != nil {
		return mapErr(err)
	}
	return nil
}

// queueExec runs a statement whose only answer is success or an error: on a
// pipeTx it is queued and may leave with COMMIT; on a plain transaction it
// runs now.
func queueExec(ctx context.Context, tx pgx.Tx, sql string, args ...any) error {
	if t, ok := tx.(*pipeTx); ok {
		t.queue(sql, args, nil, false)
		return nil
	}
	_, err := tx.Exec(ctx, sql, args...)
	return mapError(err)
}

// flushed waits for every statement queued on tx and returns the first error.
func flushed(ctx context.Context, tx pgx.Tx) error {
	if t, ok := tx.(*pipeTx); ok {
		return t.flush(ctx)
	}
	return nil
}

// firstError is the first error that is not nil.
func firstError(errs ...error) error {
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}
