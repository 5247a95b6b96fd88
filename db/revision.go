package db

import (
	"context"
	"errors"
	"fmt"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// Meta is the bookkeeping every stored revision carries: whose site, which
// record and revision, who wrote it when, why (required from revision 2 on),
// and whether this revision voids the record.
type Meta struct {
	Site      string    `db:"site" json:"site"`
	ID        uuid.UUID `db:"id" json:"id"`
	Revision  int       `db:"revision" json:"revision"`
	CreatedAt time.Time `db:"created_at" json:"created_at"`
	CreatedBy string    `db:"created_by" json:"created_by"`
	Reason    string    `db:"reason" json:"reason"`
	Voided    bool      `db:"voided" json:"voided"`
}

// Actor is the authenticated user on whose behalf a write is made.
type Actor struct {
	Site string
	Name string
	Role string
}

// Change names the revision a correction or void is based on and why it is made.
// A write whose BaseRevision is not the latest fails with ErrConflict, so two
// people correcting the same record never overwrite each other silently.
type Change struct {
	BaseRevision int
	Reason       string
}

const metaColumns = "site, id, revision, created_at, created_by, reason, voided"

// table describes one append-only record table: its name, the entity name used in
// the audit chain, and its business columns (recordColumns of its data type).
type table struct {
	name   string
	entity string
	fields []string
}

// recordColumns lists the db columns of a record's data struct in field
// order: a table's business columns are its data type's fields, so a new
// column is one tagged struct field.
func recordColumns(data any) []string {
	t := reflect.TypeOf(data)
	cols := make([]string, 0, t.NumField())
	for i := range t.NumField() {
		if c := t.Field(i).Tag.Get("db"); c != "" && c != "-" {
			cols = append(cols, c)
		}
	}
	return cols
}

// recordValues returns a record's field values in recordColumns order.
func recordValues(data any) []any {
	v := reflect.ValueOf(data)
	fields := columnFields(v.Type())
	vals := make([]any, len(fields))
	for i, f := range fields {
		vals[i] = v.Field(f).Interface()
	}
	return vals
}

// columnFieldsOf keeps, per data type, the indexes of its fields that are
// columns: a write of many records asks for the same type again and again.
var columnFieldsOf sync.Map // reflect.Type → []int

// columnFields lists the indexes of t's fields with a db column, in field order.
func columnFields(t reflect.Type) []int {
	if f, ok := columnFieldsOf.Load(t); ok {
		return f.([]int)
	}
	var out []int
	for i := range t.NumField() {
		if c := t.Field(i).Tag.Get("db"); c != "" && c != "-" {
			out = append(out, i)
		}
	}
	columnFieldsOf.Store(t, out)
	return out
}

func (t table) columns() string { return metaColumns + ", " + strings.Join(t.fields, ", ") }

// writeRevision is the step that inserts one revision row with the record's values.
func (t table) writeRevision(ctx context.Context, m Meta, values []any) step {
	return func(tx pgx.Tx) error {
		args := append([]any{m.Site, m.ID, m.Revision, m.CreatedAt, m.CreatedBy, m.Reason, m.Voided}, values...)
		ph := make([]string, len(args))
		for i := range ph {
			ph[i] = "$" + strconv.Itoa(i+1)
		}
		q := "INSERT INTO " + t.name + " (" + t.columns() + ") VALUES (" + strings.Join(ph, ", ") + ")"
		return queueExec(ctx, tx, q, args...)
	}
}

// recorded is the step that inserts revision m with the record's values
// and appends its pending leaf, encoded (AppendLeaf's way) from the row as
// the INSERT returns it: RETURNING gives the row as stored, so the leaf is
// the one AppendLeaf would encode from reading it back, one statement sooner.
func (s *Store) recorded(ctx context.Context, t table, m Meta, values []any, action string) step {
	return func(tx pgx.Tx) error {
		k, err := leafKind(t.entity, 0)
		if err != nil {
			return err
		}
		args := append([]any{m.Site, m.ID, m.Revision, m.CreatedAt, m.CreatedBy, m.Reason, m.Voided}, values...)
		ph := make([]string, len(args))
		for i := range ph {
			ph[i] = "$" + strconv.Itoa(i+1)
		}
		q := "INSERT INTO " + t.name + " (" + t.columns() + ") VALUES (" + strings.Join(ph, ", ") + ") RETURNING " + strings.Join(k.Columns, ", ")
		return s.appendReturned(ctx, tx, k, m.leafEntry(t.entity, action), q, args...)
	}
}

// recordedNew prepares, before the write's transaction, the step that
// writes revision 1 (m) of a new record holding a mark of kind k: one
// statement inserts the row, a second claims the mark (a held mark refuses
// it) and appends its pending leaf, both in the write's one round trip.
// The leaf is encoded here from the values sent (valueFact: every column of
// the row is stored exactly as sent, else this refuses), so nothing is read
// back and the leaf leaves with the row.
// check, called when the step runs, may ask the statement to compare a
// procedure's count of judgement changes too (judged.go): a count other
// than the one given fails the write with errJudgementChanged. The row's
// INSERT then first takes that procedure's shared flag lock, so the count
// is read, by the next statement, under the lock (flag_lock.go).
// A write whose context carries its request's token check (carryUserCheck)
// has the second statement check the token before it claims the mark.
func (s *Store) recordedNew(ctx context.Context, t table, k markKind, m Meta, mark string, values []any, action string, check func() *judgedCheck) (step, error) {
	if m.Revision != 1 {
		return nil, fmt.Errorf("db: %s %s: revision %d is not a new record", t.entity, m.ID, m.Revision)
	}
	lk, err := leafKind(t.entity, 0)
	if err != nil {
		return nil, err
	}
	key := s.logKey()
	if key == nil {
		return nil, ErrNoLogKey
	}
	fds, err := leafFields(ctx, s.pool, lk, t.name)
	if err != nil {
		return nil, err
	}
	args := append([]any{m.Site, m.ID, m.Revision, m.CreatedAt, m.CreatedBy, m.Reason, m.Voided}, values...)
	st, err := newRecordStatements(t, lk, len(args))
	if err != nil {
		return nil, err
	}
	leafVals := make([]any, len(st.leafArgs))
	for i, j := range st.leafArgs {
		leafVals[i] = args[j]
	}
	f, err := valueFact(lk, fds, leafVals)
	if err != nil {
		return nil, err
	}
	pending := pendingRow(key, lk, m.leafEntry(t.entity, action), m.ID, m.Revision, f)
	if len(pending) != st.pending {
		return nil, fmt.Errorf("db: %s: %d pending values for %d columns", t.name, len(pending), st.pending)
	}
	logArgs := append(pending, k.kind, mark)
	return func(tx pgx.Tx) error {
		chk := check()
		stored, storedArgs := st.stored, args
		var judged []any // the count check's arguments, after the leaf's and the mark's
		if chk != nil {
			stored, storedArgs = st.storedLocked, slices.Concat(args, []any{chk.procedure})
			judged = []any{chk.procedure, chk.changes}
		}
		if err := queueExec(ctx, tx, stored, storedArgs...); err != nil {
			return err
		}
		user := carriedUserCheck(ctx, tx)
		switch {
		case user != nil && chk != nil:
			return queueEnforced(ctx, tx, user.confirmRow(chk), st.checkedUser, slices.Concat(logArgs, judged, user.args())...)
		case user != nil:
			return queueEnforced(ctx, tx, user.confirmRow(nil), st.loggedUser, slices.Concat(logArgs, user.args())...)
		case chk != nil:
			return queueEnforced(ctx, tx, chk.unchanged, st.checked, slices.Concat(logArgs, judged)...)
		}
		return queueExec(ctx, tx, st.logged, logArgs...)
	}, nil
}

// recordStatements are a new record's statements for one table, built once
// (they depend only on the table's columns and its leaf kind).
type recordStatements struct {
	args     int    // the record's values, its meta columns first
	leafArgs []int  // the argument of each of the leaf kind's columns
	pending  int    // values of a pending log row
	stored   string // the row's INSERT
	// The row's INSERT, taking first the shared flag lock of the procedure
	// in its last argument (after the row's values).
	storedLocked string
	// The mark's claim and the pending leaf; checked: the same, answering
	// the procedure's count of judgement changes.
	logged, checked string
	// logged and checked with the request's token check (userCheckCTEs,
	// its four arguments last): it answers first, and the claim is made
	// from its row, so no mark is claimed before it passed.
	loggedUser, checkedUser string
}

var recordStatementCache sync.Map // leafShapeKey → *recordStatements

func newRecordStatements(t table, lk LeafKind, n int) (*recordStatements, error) {
	key := leafShapeKey{lk.Kind, lk.Version, t.name}
	if st, ok := recordStatementCache.Load(key); ok && st.(*recordStatements).args == n {
		return st.(*recordStatements), nil
	}
	cols := strings.Split(t.columns(), ", ")
	if len(cols) != n {
		return nil, fmt.Errorf("db: %s: %d values for %d columns", t.name, n, len(cols))
	}
	st := &recordStatements{args: n, pending: len(pendingColumnList)}
	for _, c := range lk.Columns {
		j := slices.Index(cols, c)
		if j < 0 {
			return nil, fmt.Errorf("db: %s leaf column %s is not written", t.entity, c)
		}
		st.leafArgs = append(st.leafArgs, j)
	}
	ph := func(from, count int) string {
		p := make([]string, count)
		for i := range p {
			p[i] = "$" + strconv.Itoa(from+i)
		}
		return strings.Join(p, ", ")
	}
	arg := func(i int) string { return "$" + strconv.Itoa(i) }
	// The row's INSERT is a statement of its own. In one statement with
	// the claim and the leaf, the three tables' check constraints (built
	// anew for every execution) took the statement's executor memory past
	// what the server's allocator keeps: every create grew the backend's
	// heap and gave it back (brk, page faults; about 7 % of the machine's
	// CPU in the create benchmark). The claim and the leaf stay together.
	st.stored = `INSERT INTO ` + t.name + ` (` + t.columns() + `) VALUES (` + ph(1, n) + `)`
	// Locked: the lock is the row's one-time condition (it answers void,
	// which is not NULL), taken before the row is formed. The site is $1.
	st.storedLocked = `INSERT INTO ` + t.name + ` (` + t.columns() + `) SELECT ` + ph(1, n) + `
		WHERE pg_advisory_xact_lock_shared(` + flagLockKey("$1", arg(n+1)+"::uuid") + `) IS NOT NULL`
	// The claim is a plain INSERT: a new record holds no mark, so a row
	// already there is another record's, and its primary key refuses the
	// statement (and the write); CreateCoupon names the holder
	// (duplicateMark). An ON CONFLICT claim would cost a speculative
	// insertion on every create for the rare refusal. The leaf's values
	// come first: the site is $1 and the record's id $4 in both tables.
	if pendingColumnList[0] != "site" || pendingColumnList[3] != "record_id" {
		return nil, fmt.Errorf("db: the pending leaf's columns %v no longer start site, _, _, record_id", pendingColumnList)
	}
	p := st.pending
	claimed := `(site, kind, mark, record_id)`
	claim := `claim AS (
			INSERT INTO current_marks ` + claimed + ` VALUES ($1, ` + arg(p+1) + `, ` + arg(p+2) + `, $4))`
	claimChecked := `claim AS (
			INSERT INTO current_marks ` + claimed + ` SELECT $1, ` + arg(p+1) + `, ` + arg(p+2) + `, $4 FROM checked)`
	logged := `INSERT INTO log_pending (` + pendingColumns + `) VALUES (` + ph(1, p) + `)`
	st.logged = `WITH ` + claim + "\n" + logged
	// Checked: the same, answering the procedure's count of judgement
	// changes, and failing (SQLSTATE refuseJudgementChanged, which aborts
	// the transaction) when it is not the count the create judged by.
	judged := `CASE WHEN count(*) = ` + arg(p+4) + `::bigint THEN count(*)
		       ELSE etchlog_refuse('` + refuseJudgementChanged + `', 'what the procedure''s coupons are judged by changed') END
		FROM judgement_changes WHERE site = $1 AND procedure_id = ` + arg(p+3)
	st.checked = `WITH ` + claim + `, logged AS (` + logged + `)
		SELECT ` + judged
	st.loggedUser = `WITH ` + userCheckCTEs(p+3, p+4) + `, ` + claimChecked + `, logged AS (` + logged + `)
		SELECT ok FROM checked`
	st.checkedUser = `WITH ` + userCheckCTEs(p+5, p+6) + `, ` + claimChecked + `, logged AS (` + logged + `)
		SELECT (SELECT ok FROM checked), ` + judged
	recordStatementCache.Store(key, st)
	return st, nil
}

// lockRecord serialises the writes to one record until the transaction ends.
// It is an advisory lock, not SELECT ... FOR UPDATE, because row locks need
// UPDATE privilege and the service has none on record tables.
// On a pipelined write the lock leaves with the next statement, which runs
// after it.
func lockRecord(ctx context.Context, tx pgx.Tx, id uuid.UUID) error {
	return queueExec(ctx, tx, "SELECT pg_advisory_xact_lock(hashtextextended('etchlog-record:' || $1::text, 0))", id)
}

// lockLatest locks a record and returns its latest revision.
func (t table) lockLatest(ctx context.Context, tx pgx.Tx, site string, id uuid.UUID) (rev int, voided bool, err error) {
	if err := lockRecord(ctx, tx, id); err != nil {
		return 0, false, err
	}
	q := "SELECT revision, voided FROM " + t.name + `
		WHERE site = $1 AND id = $2
		ORDER BY revision DESC LIMIT 1`
	err = tx.QueryRow(ctx, q, site, id).Scan(&rev, &voided)
	if errors.Is(err, pgx.ErrNoRows) {
		return 0, false, fmt.Errorf("%s %s: %w", t.entity, id, ErrNotFound)
	}
	return rev, voided, err
}

// checkBase verifies that a change is based on the latest, non-voided revision.
func (t table) checkBase(ctx context.Context, tx pgx.Tx, site string, id uuid.UUID, ch Change) error {
	if strings.TrimSpace(ch.Reason) == "" {
		return &FieldError{Field: "reason", Reason: "a correction or void must say why"}
	}
	latest, voided, err := t.lockLatest(ctx, tx, site, id)
	if err != nil {
		return err
	}
	if voided {
		return fmt.Errorf("%s %s: %w", t.entity, id, ErrVoided)
	}
	if ch.BaseRevision != latest {
		return fmt.Errorf("%w: %s %s is at revision %d, the change is based on revision %d",
			ErrConflict, t.entity, id, latest, ch.BaseRevision)
	}
	return nil
}

// voidLatest is the step that copies the latest revision forward as a voided revision.
func (t table) voidLatest(ctx context.Context, m Meta) step {
	return func(tx pgx.Tx) error {
		fields := strings.Join(t.fields, ", ")
		q := "INSERT INTO " + t.name + " (" + metaColumns + ", " + fields + `)
			SELECT site, id, $3, $4, $5, $6, true, ` + fields + " FROM " + t.name + `
			WHERE site = $1 AND id = $2 AND revision = $7`
		_, err := tx.Exec(ctx, q, m.Site, m.ID, m.Revision, m.CreatedAt, m.CreatedBy, m.Reason, m.Revision-1)
		return mapError(err)
	}
}

// tx runs fn in one transaction and commits once. The transaction is a
// pipeTx (pipeline.go): BEGIN leaves with the first statements, and
// statements a step queues leave together.
func (s *Store) tx(ctx context.Context, fn func(tx pgx.Tx) error) error {
	conn, err := s.pool.Acquire(ctx)
	if err != nil {
		return err
	}
	defer conn.Release()
	tx := newPipeTx(conn)
	defer tx.Rollback(ctx) //nolint:errcheck // no-op after Commit
	// A request let in on a kept lookup of its token confirms its user
	// first, unless a step of the write carries the check in a statement
	// of its own; should none have taken it, it goes last.
	carried := carriesUserCheck(ctx)
	if !carried {
		if err := queueUserCheck(ctx, tx); err != nil {
			return err
		}
	}
	if err := fn(tx); err != nil {
		return err
	}
	if carried && !tx.userChecked {
		if err := queueUserCheck(ctx, tx); err != nil {
			return err
		}
	}
	if err := markCommitted(ctx, tx); err != nil { // under an Idempotency-Key: only while the claim holds
		return err
	}
	if err := tx.Commit(ctx); err != nil {
		return err
	}
	s.kickSequencer()
	return nil
}

// step is one part of a write, run inside the write's transaction.
type step func(tx pgx.Tx) error

// write runs steps in order in one transaction and commits once; the first
// failing step rolls everything back. what names the write in the error.
func (s *Store) write(ctx context.Context, what string, steps ...step) error {
	err := s.tx(ctx, func(tx pgx.Tx) error {
		for _, st := range steps {
			if err := st(tx); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("db: %s: %w", what, err)
	}
	return nil
}

// Audit actions of record revisions.
const (
	actionCreate  = "create"
	actionCorrect = "correct"
	actionVoid    = "void"
)

// newRecord returns the bookkeeping of revision 1 of a new record.
func (s *Store) newRecord(a Actor) (Meta, error) {
	id, err := uuid.NewV7()
	if err != nil {
		return Meta{}, err
	}
	return Meta{Site: a.Site, ID: id, Revision: 1, CreatedAt: s.now(), CreatedBy: a.Name}, nil
}

// nextRevision returns the bookkeeping of the revision a change writes; a
// void marks it voided.
func (s *Store) nextRevision(a Actor, id uuid.UUID, ch Change, voided bool) Meta {
	return Meta{Site: a.Site, ID: id, Revision: ch.BaseRevision + 1, CreatedAt: s.now(), CreatedBy: a.Name,
		Reason: ch.Reason, Voided: voided}
}

// baseIs is the step that checks a change is based on the latest, non-voided revision.
func (t table) baseIs(ctx context.Context, site string, id uuid.UUID, ch Change) step {
	return func(tx pgx.Tx) error { return t.checkBase(ctx, tx, site, id, ch) }
}

// logged is the step that appends the revision just written to the site's
// log: a pending leaf encoded from the row as stored (AppendLeaf).
func (s *Store) logged(ctx context.Context, t table, m Meta, action string) step {
	return func(tx pgx.Tx) error { return s.AppendLeaf(ctx, tx, m.leafEntry(t.entity, action)) }
}

// leafEntry names the revision m for the log.
func (m Meta) leafEntry(kind, action string) LeafEntry {
	return LeafEntry{Kind: kind, Site: m.Site, ID: m.ID, Revision: m.Revision, Actor: m.CreatedBy, Action: action, Reason: m.Reason, At: m.CreatedAt}
}

// RecordID returns the record's id.
func (m Meta) RecordID() uuid.UUID { return m.ID }

// RecordMeta returns the revision's bookkeeping.
func (m Meta) RecordMeta() Meta { return m }
