// Package db stores etchlog's records in PostgreSQL: procedures (WPS),
// qualification records (PQR), coupons, macro-etch measurements, API users and
// the audit chain. All SQL lives in this package. Records are append-only: a
// correction or a void writes a new revision, and every write is one
// transaction that also appends an audit event.
package db

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"
	"sync/atomic"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgxpool"

	"etchlog/db/logfmt"
)

// Sentinel errors returned by Store methods; the HTTP layer maps them to status codes.
var (
	// ErrNotFound means no record with that key exists at the caller's site.
	ErrNotFound = errors.New("not found")
	// ErrConflict means the write collides with existing data (duplicate key or stale revision).
	ErrConflict = errors.New("conflict")
	// ErrInvalid means the database refused a value (check or foreign-key rule).
	ErrInvalid = errors.New("invalid value")
	// ErrVoided means the record was voided and can no longer be corrected.
	ErrVoided = errors.New("record is voided")
	// ErrForbidden means the actor's role may not make this write.
	ErrForbidden = errors.New("the role may not do this")
	// ErrNoLogKey means no log signing key was set (SetLogKey), so nothing can be written.
	ErrNoLogKey = errors.New("no log signing key: run etchlog keygen and give the key to the service")
	// ErrBadCursor means a list cursor is not one that the list handed out.
	ErrBadCursor = errors.New("not a cursor returned by this list")
)

// FieldError is a refused value for one named field.
type FieldError struct {
	Field  string
	Reason string
}

// Error reports the field and the reason.
func (e *FieldError) Error() string { return e.Field + ": " + e.Reason }

// Is lets errors.Is(err, ErrInvalid) match a FieldError.
func (e *FieldError) Is(target error) bool { return target == ErrInvalid }

// DuplicateError is a write refused because a record with the same key
// exists; ExistingID names it so the caller can correct that one instead.
type DuplicateError struct {
	Field      string
	ExistingID uuid.UUID
	Reason     string
}

// Error names the field, the reason and the existing record.
func (e *DuplicateError) Error() string {
	return fmt.Sprintf("%s: %s (existing %s)", e.Field, e.Reason, e.ExistingID)
}

// Is lets errors.Is(err, ErrConflict) match a DuplicateError.
func (e *DuplicateError) Is(target error) bool { return target == ErrConflict }

// Store is the PostgreSQL-backed record store.
type Store struct {
	pool    *pgxpool.Pool
	long    *pgxpool.Pool // long reads (export, audit verify): a pool of their own, so they cannot starve writes
	standby *standby      // a streaming standby the export may read from (UseStandby), or nil
	now     func() time.Time
	key     atomic.Pointer[logfmt.Signer] // signs checkpoints, tags pending leaves
	kick    chan struct{}                 // a write committed: the sequencer may have work
	// months are the production months (UTC, first day) known to have a
	// partition, so a write asks the database only about a month it has not seen.
	months sync.Map
	// judged keeps what new coupons of a procedure are judged by (judged.go).
	judged judgedCache
	// pageWaits counts the list pages that waited for the sequencer (readPage).
	pageWaits atomic.Int64
}

// LongReadConns is how many connections long reads (export, audit verify)
// share; more of them wait for one, while writes keep the main pool.
const LongReadConns = 2

// DefaultConns is how many connections the main pool (every request but
// the long reads) keeps at most, unless Open is given another number. A
// request holds one for each of its round trips and, in a write, from the
// first statement to the commit, while the server's goroutine prepares the
// next statement; with pgx's own default (the larger of 4 and the CPUs) a
// 2-core server ran 13 clients' requests, and each request's token lookup,
// through 4 connections, about half of them held by transactions waiting
// for the server's next statement (README, "Performance").
const DefaultConns = 16

// Open connects the service to the database at url and checks that it
// answers. It refuses a login that is a superuser or can act as the tables'
// owner (ErrPrivilegedLogin): the service connects as AppRole. The main
// pool keeps at most conns connections (0: DefaultConns); long reads have
// LongReadConns of their own, and the log sequencer one.
func Open(ctx context.Context, url string, conns int) (*Store, error) {
	return open(ctx, url, "", true, conns)
}

// open connects, optionally becoming role for the session, and refuses a
// privileged login when unprivileged is set.
func open(ctx context.Context, url, role string, unprivileged bool, conns int) (*Store, error) {
	cfg, err := pgxpool.ParseConfig(url)
	if err != nil {
		return nil, fmt.Errorf("db: parse url: %w", err)
	}
	if conns <= 0 {
		conns = DefaultConns
	}
	cfg.MaxConns = int32(min(conns, math.MaxInt32))
	// Audit payloads render timestamps as text; a fixed zone keeps them comparable.
	cfg.ConnConfig.RuntimeParams["timezone"] = "UTC"
	// The service's statements are short; compiling one whose estimate is
	// inflated (a set-returning function counts as 1,000 rows, as in the
	// coupons list's month walk) took PostgreSQL seconds for a 1 ms page.
	cfg.ConnConfig.RuntimeParams["jit"] = "off"
	// A request reads a page or a record's few rows by key. On a site that
	// filled faster than autovacuum analysed it (a new installation's first
	// import: its tables analysed while empty), PostgreSQL takes the site for
	// a handful of rows and reads a list page as a bitmap scan of every row
	// of the site and a sort (256 ms a coupons page at 22,000 coupons in the
	// demo's mixed run, against an ordered walk of 50 index entries).
	// Without bitmap scans the walk stays an ordered index scan:
	// TestListPlansUnderYoungStatistics ("empty database") counts 36 list
	// plans over its bound instead of 60, and the analysed plans read 97,390
	// rows in all instead of 115,077. Long reads (export, audit verify),
	// which read a site whole, keep them (PlannerDefaults).
	cfg.ConnConfig.RuntimeParams["enable_bitmapscan"] = "off"
	// Named in pg_stat_activity, so an operator (and a CPU count per
	// connection) tells the service's requests from its log sequencer.
	if cfg.ConnConfig.RuntimeParams["application_name"] == "" {
		cfg.ConnConfig.RuntimeParams["application_name"] = "etchlog"
	}
	if role != "" {
		cfg.ConnConfig.RuntimeParams["role"] = role
	}
	cfg.AfterConnect = func(_ context.Context, c *pgx.Conn) error {
		sendUUIDsAsBytes(c.TypeMap())
		return nil
	}
	pool, err := pgxpool.NewWithConfig(ctx, cfg)
	if err != nil {
		return nil, fmt.Errorf("db: connect: %w", err)
	}
	if err := pool.Ping(ctx); err != nil {
		pool.Close()
		return nil, fmt.Errorf("db: ping: %w", err)
	}
	if unprivileged {
		p, err := privileged(ctx, pool)
		if err == nil && p {
			err = fmt.Errorf("%w: connect as %s (login %s)", ErrPrivilegedLogin, AppRole, cfg.ConnConfig.User)
		}
		if err != nil {
			pool.Close()
			return nil, fmt.Errorf("db: open: %w", err)
		}
	}
	lcfg := cfg.Copy()
	PlannerDefaults(lcfg.ConnConfig.RuntimeParams)
	lcfg.MaxConns = LongReadConns
	lcfg.MinConns = 0
	long, err := pgxpool.NewWithConfig(ctx, lcfg)
	if err != nil {
		pool.Close()
		return nil, fmt.Errorf("db: connect: %w", err)
	}
	return &Store{pool: pool, long: long, now: func() time.Time { return time.Now().UTC().Truncate(time.Microsecond) },
		kick: make(chan struct{}, 1)}, nil
}

// PlannerDefaults removes from the session settings p those the main pool
// sets away from PostgreSQL's planner defaults (Open): bitmap scans
// allowed again. The long reads, which read a site whole, take it; so do
// the benchmarks' raw baselines.
func PlannerDefaults(p map[string]string) { delete(p, "enable_bitmapscan") }

// Close releases every connection.
func (s *Store) Close() {
	s.pool.Close()
	s.long.Close()
	if s.standby != nil {
		s.standby.pool.Close()
	}
}

// Pool exposes the connection pool for benchmarks that compare against raw inserts.
func (s *Store) Pool() *pgxpool.Pool { return s.pool }

// Ping reports whether the database answers.
func (s *Store) Ping(ctx context.Context) error { return s.pool.Ping(ctx) }

// uniqueWords says in the user's words which value a unique key refused.
// (Coupon marks and record numbers are claimed in current_marks, whose
// refusal names the holder: DuplicateError.)
var uniqueWords = map[string]string{
	"procedures_code_key": "another procedure at this site has this code",
}

// pgErrCode is the SQLSTATE of a PostgreSQL error in err's chain ("" when none).
func pgErrCode(err error) string {
	var pg *pgconn.PgError
	if errors.As(err, &pg) {
		return pg.Code
	}
	return ""
}

// mapError turns PostgreSQL errors into the package's sentinel errors by SQLSTATE.
func mapError(err error) error {
	var pg *pgconn.PgError
	if !errors.As(err, &pg) {
		return err
	}
	switch pg.Code {
	case refuseUserChanged:
		return ErrUserChanged
	case refuseJudgementChanged:
		return errJudgementChanged
	case pgerrcode.DeadlockDetected, pgerrcode.SerializationFailure: // two writes crossed; the client may retry
		return fmt.Errorf("%w: a concurrent write got in the way; retry", ErrConflict)
	case pgerrcode.UniqueViolation:
		if pg.ConstraintName == "measurements_section_per_coupon" { // the trigger names the existing section
			if id, err := uuid.Parse(pg.Detail); err == nil {
				return &DuplicateError{Field: "section", ExistingID: id,
					Reason: "this coupon already has a current section with this label; correct that one or choose another label"}
			}
		}
		if w, ok := uniqueWords[pg.ConstraintName]; ok {
			return fmt.Errorf("%w: %s", ErrConflict, w)
		}
		return fmt.Errorf("%w: the record repeats a value that must be unique", ErrConflict)
	case pgerrcode.CheckViolation, pgerrcode.NotNullViolation, pgerrcode.ForeignKeyViolation,
		pgerrcode.InvalidDatetimeFormat, pgerrcode.DatetimeFieldOverflow, pgerrcode.InvalidTextRepresentation:
		// The constraint's name is the schema's word, not the user's: the
		// column names the field when the database reports it.
		field := pg.ColumnName
		if field == "" {
			field = "body"
		}
		return &FieldError{Field: field, Reason: "is refused by the stored-data rules for this field"}
	}
	return err
}
