package db

import (
	"context"
	"errors"
	"fmt"
	"sync"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"
)

// Where a long read ran: the primary or a streaming standby.
const (
	ReadPrimary = "primary"
	ReadStandby = "standby"
)

// standbyRecheck is how long a freshness answer is kept before the standby
// is asked again, so a burst of exports costs one probe.
const standbyRecheck = 250 * time.Millisecond

// standby is a PostgreSQL streaming standby that the export may read from
// while it keeps up with the primary.
type standby struct {
	pool   *pgxpool.Pool
	maxLag time.Duration

	mu      sync.Mutex
	checked time.Time
	fresh   bool
	lag     time.Duration
}

// UseStandby lets the export read from the streaming standby at url while
// its replay lag stays within maxLag; behind that, or out of reach, the
// export reads the primary. The standby must be in recovery (a primary given
// by mistake is refused) and the login must be the service's, like Open's.
// Audit verify stays on the primary: it recomputes the flags in a
// transaction it rolls back, which a standby cannot run.
func (s *Store) UseStandby(ctx context.Context, url string, maxLag time.Duration) error {
	cfg, err := pgxpool.ParseConfig(url)
	if err != nil {
		return fmt.Errorf("db: parse read url: %w", err)
	}
	cfg.ConnConfig.RuntimeParams["timezone"] = "UTC"
	cfg.MaxConns = LongReadConns
	cfg.MinConns = 0
	pool, err := pgxpool.NewWithConfig(ctx, cfg)
	if err != nil {
		return fmt.Errorf("db: connect to standby: %w", err)
	}
	var recovering bool
	err = pool.QueryRow(ctx, `SELECT pg_is_in_recovery()`).Scan(&recovering)
	if err == nil && !recovering {
		err = errors.New("the server is not a standby (pg_is_in_recovery() is false)")
	}
	if err == nil {
		var p bool
		if p, err = privileged(ctx, pool); err == nil && p {
			err = fmt.Errorf("%w: connect to the standby as %s", ErrPrivilegedLogin, AppRole)
		}
	}
	if err != nil {
		pool.Close()
		return fmt.Errorf("db: standby: %w", err)
	}
	s.standby = &standby{pool: pool, maxLag: maxLag}
	return nil
}

// StandbyLag reports the standby's replay lag as last measured and whether
// it is within the bound; ok is false without a standby.
func (s *Store) StandbyLag(ctx context.Context) (lag time.Duration, fresh, ok bool) {
	if s.standby == nil {
		return 0, false, false
	}
	fresh = s.standby.isFresh(ctx, s.long)
	s.standby.mu.Lock()
	defer s.standby.mu.Unlock()
	return s.standby.lag, fresh, true
}

// isFresh measures the replay lag at most every standbyRecheck. A standby
// that has replayed the primary's current WAL position has no lag; one
// behind it lags by the time since it last replayed a transaction
// (pg_last_xact_replay_timestamp, PostgreSQL manual, "Recovery Information
// Functions"). Any error counts as not fresh.
func (sb *standby) isFresh(ctx context.Context, primary *pgxpool.Pool) bool {
	sb.mu.Lock()
	defer sb.mu.Unlock()
	if time.Since(sb.checked) < standbyRecheck {
		return sb.fresh
	}
	sb.checked = time.Now()
	sb.fresh = false
	ctx, cancel := context.WithTimeout(ctx, time.Second)
	defer cancel()
	var at string
	if err := primary.QueryRow(ctx, `SELECT pg_current_wal_lsn()::text`).Scan(&at); err != nil {
		return false
	}
	var caughtUp bool
	var lag *float64 // seconds
	err := sb.pool.QueryRow(ctx, `SELECT pg_last_wal_replay_lsn() >= $1::pg_lsn,
		extract(epoch FROM clock_timestamp() - pg_last_xact_replay_timestamp())::float8`, at).Scan(&caughtUp, &lag)
	switch {
	case err != nil:
		return false
	case caughtUp:
		sb.lag = 0
	case lag == nil: // behind, and has replayed no transaction since it started
		return false
	default:
		sb.lag = time.Duration(*lag * float64(time.Second))
	}
	sb.fresh = sb.lag <= sb.maxLag
	return sb.fresh
}

// markStale makes the standby count as behind until the next probe.
func (sb *standby) markStale() {
	sb.mu.Lock()
	defer sb.mu.Unlock()
	sb.checked, sb.fresh = time.Now(), false
}

// readSourceKey carries a function told where a long read runs.
type readSourceKey struct{}

// NoteReadSource returns a context under which a long read (the export)
// tells note where it runs (ReadPrimary or ReadStandby) before it reads.
func NoteReadSource(ctx context.Context, note func(string)) context.Context {
	return context.WithValue(ctx, readSourceKey{}, note)
}

// longRead picks the pool for a long read, the standby while it is fresh
// (else the primary's long-read pool), and tells the context's note. A
// standby that went away since it was last found fresh is marked stale and
// the primary serves the read.
func (s *Store) longRead(ctx context.Context) *pgxpool.Pool {
	pool, src := s.long, ReadPrimary
	if s.standby != nil && s.standby.isFresh(ctx, s.long) {
		if err := s.standby.pool.Ping(ctx); err == nil {
			pool, src = s.standby.pool, ReadStandby
		} else {
			s.standby.markStale()
		}
	}
	if note, ok := ctx.Value(readSourceKey{}).(func(string)); ok {
		note(src)
	}
	return pool
}
