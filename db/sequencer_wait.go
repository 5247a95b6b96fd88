package db

import (
	"context"
	"time"
)

// Writers wake the sequencer after a commit, and reads that must show what
// was acknowledged before them wait for it (awaitLogged).

// kickSequencer tells this process's sequencer that a write committed.
func (s *Store) kickSequencer() {
	select {
	case s.kick <- struct{}{}:
	default:
	}
}

// awaitLogged waits, up to LogWait, until every leaf of the site pending when
// it was called is sequenced, so a list read right after a write shows it.
// Without a running sequencer it gives up and the list is merely stale.
func (s *Store) awaitLogged(ctx context.Context, site string) {
	var last *int64
	if err := s.pool.QueryRow(ctx, lastPending, site).Scan(&last); err != nil || last == nil {
		return
	}
	s.awaitSequenced(ctx, site, *last)
}

// lastPending is the newest pending leaf of site $1 (NULL: none).
const lastPending = `SELECT max(seq) FROM log_pending WHERE site = $1`

// awaitSequenced waits, up to LogWait, until the site has no pending leaf
// at or below sequence last.
func (s *Store) awaitSequenced(ctx context.Context, site string, last int64) {
	s.kickSequencer()
	deadline := time.Now().Add(LogWait)
	for wait := time.Millisecond; time.Now().Before(deadline); wait = min(2*wait, 20*time.Millisecond) {
		select {
		case <-ctx.Done():
			return
		case <-time.After(wait):
		}
		var left bool
		if err := s.pool.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM log_pending WHERE site = $1 AND seq <= $2)`, site, last).Scan(&left); err != nil || !left {
			return
		}
	}
}

// LogWait bounds how long a list waits for the sequencer (awaitLogged).
var LogWait = 3 * time.Second
