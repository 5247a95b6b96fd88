package db

import (
	"context"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// LogEntry is one leaf of a site's log as listed: which fact (kind, record,
// revision, encoding version), who did what when, the leaf hash, its index
// and when the sequencer integrated it.
type LogEntry struct {
	Site         string    `db:"site" json:"site"`
	Index        int64     `db:"leaf_index" json:"index"`
	Entity       string    `db:"kind" json:"entity"`
	EntityID     uuid.UUID `db:"record_id" json:"entity_id"`
	Revision     int       `db:"revision" json:"revision"`
	Version      int       `db:"version" json:"fact_version"`
	Actor        string    `db:"actor" json:"actor"`
	Action       string    `db:"action" json:"action"`
	Reason       string    `db:"reason" json:"reason"`
	At           time.Time `db:"at" json:"at"`
	LeafHash     []byte    `db:"leaf_hash" json:"leaf_hash"`
	IntegratedAt time.Time `db:"integrated_at" json:"integrated_at"`
}

// AuditFilter selects log entries.
type AuditFilter struct {
	Entity   string
	EntityID *uuid.UUID
	Actor    string
	From, To *time.Time
}

// AuditEvents lists a site's log in index order after the cursor.
func (s *Store) AuditEvents(ctx context.Context, site string, af AuditFilter, cursor string, limit int) (Page[LogEntry], error) {
	if limit <= 0 || limit > MaxPageSize {
		limit = MaxPageSize
	}
	from, err := logCursor("audit_events", cursor)
	if err != nil {
		return Page[LogEntry]{}, fmt.Errorf("db: list log: %w", err)
	}
	s.awaitLogged(ctx, site)
	rows, _ := s.pool.Query(ctx, `
		SELECT site, leaf_index, kind, record_id, revision, version, actor, action, reason, at, leaf_hash, integrated_at, leaf_index
		FROM log_leaves
		WHERE site = $1 AND leaf_index >= $2
		  AND ($3 = '' OR kind = $3)
		  AND ($4::uuid IS NULL OR record_id = $4)
		  AND ($5 = '' OR actor = $5)
		  AND ($6::timestamptz IS NULL OR at >= $6)
		  AND ($7::timestamptz IS NULL OR at < $7)
		ORDER BY leaf_index
		LIMIT $8`, site, from, af.Entity, af.EntityID, af.Actor, af.From, af.To, limit)
	ev, last, err := collectIndexed[LogEntry](rows)
	if err != nil {
		return Page[LogEntry]{}, fmt.Errorf("db: list log: %w", err)
	}
	return Page[LogEntry]{Items: ev, Next: nextLogCursor("audit_events", from, last, len(ev))}, nil
}

// Verification is the outcome of checking a site's log, its records and its
// derived flags.
type Verification struct {
	Leaves         uint64    `json:"leaves_checked"`
	CheckpointSize uint64    `json:"checkpoint_size"`
	Root           []byte    `json:"root"`
	OK             bool      `json:"ok"`
	Problems       []string  `json:"problems"`
	NotListed      int       `json:"problems_not_listed"`
	At             time.Time `json:"verified_at"`
}

// flagDigest is a flag row as text, for comparing stored flags with flags
// recomputed from the records (computed_at aside).
const flagDigest = `SELECT subject_id::text || ' ' || variable || ' ' || kind,
	concat_ws('|', subject_kind, subject_at, procedure_id, ranges_version, unit, value, value_text, min, max,
		allowed::text, direction, excess, excess_pct, detail)
	FROM flags WHERE site = $1`

// checkFlags recomputes every flag of the site from the records in a
// transaction it rolls back, and reports flags missing, extra or different.
// Flags are derived data the service rewrites, so no leaf covers them; this
// comparison is what shows a flag deleted or edited behind its back.
func (s *Store) checkFlags(ctx context.Context, site string, problem func(string, ...any)) error {
	tx, err := s.long.Begin(ctx) // a long read: on the pool that cannot starve writes
	if err != nil {
		return err
	}
	defer tx.Rollback(ctx) //nolint:errcheck // nothing here is kept
	read := func() (map[string]string, error) {
		rows, _ := tx.Query(ctx, flagDigest, site)
		m := map[string]string{}
		var k, v string
		_, err := pgx.ForEachRow(rows, []any{&k, &v}, func() error { m[k] = v; return nil })
		return m, err
	}
	stored, err := read()
	if err != nil {
		return err
	}
	rows, _ := tx.Query(ctx, `SELECT id FROM (SELECT DISTINCT ON (id) id, voided FROM procedures
		WHERE site = $1 ORDER BY id, revision DESC) p WHERE NOT voided ORDER BY id`, site)
	procs, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
	if err != nil {
		return err
	}
	if _, err := tx.Exec(ctx, `DELETE FROM flags WHERE site = $1`, site); err != nil {
		return err
	}
	for _, p := range procs {
		pr, err := latestRanges(ctx, tx, site, p, 0)
		if err != nil {
			pr = ProcedureRanges{Site: site, ProcedureID: p} // no ranges: model flags only
		}
		if _, err := recomputeProcedure(ctx, tx, s.now(), pr); err != nil {
			return err
		}
	}
	if err := siteDrift(ctx, tx, s.now(), site); err != nil {
		return err
	}
	fresh, err := read()
	if err != nil {
		return err
	}
	for k, v := range fresh {
		switch old, ok := stored[k]; {
		case !ok:
			problem("flag %s: recomputed from the records but missing from the flags table", k)
		case old != v:
			problem("flag %s: stored flag differs from the one recomputed from the records", k)
		}
	}
	for k := range stored {
		if _, ok := fresh[k]; !ok {
			problem("flag %s: stored but not recomputed from the records", k)
		}
	}
	return nil
}
