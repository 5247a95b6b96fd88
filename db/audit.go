package db

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// AuditEvent is one link of a site's audit chain: who did what to which record
// revision, when and why, with the revision's full content as written.
type AuditEvent struct {
	Site     string          `db:"site" json:"site"`
	Seq      int64           `db:"seq" json:"seq"`
	At       time.Time       `db:"at" json:"at"`
	Actor    string          `db:"actor" json:"actor"`
	Action   string          `db:"action" json:"action"`
	Entity   string          `db:"entity" json:"entity"`
	EntityID uuid.UUID       `db:"entity_id" json:"entity_id"`
	Revision int             `db:"revision" json:"revision"`
	Reason   string          `db:"reason" json:"reason"`
	Payload  json.RawMessage `db:"payload" json:"payload"`
	PrevHash []byte          `db:"prev_hash" json:"prev_hash"`
	Hash     []byte          `db:"hash" json:"hash"`
}

// appendAudit links the revision just written into the site's chain. An advisory
// lock per site serialises writers so the chain never forks.
func appendAudit(ctx context.Context, tx pgx.Tx, t table, m Meta, action string) error {
	if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock(hashtextextended('etchlog-audit:' || $1, 0))", m.Site); err != nil {
		return err
	}
	var seq int64
	prev := make([]byte, 32)
	err := tx.QueryRow(ctx, `SELECT seq, hash FROM audit_events WHERE site = $1 ORDER BY seq DESC LIMIT 1`, m.Site).Scan(&seq, &prev)
	if err != nil && err != pgx.ErrNoRows {
		return err
	}
	_, err = tx.Exec(ctx, `
		INSERT INTO audit_events (site, seq, at, actor, action, entity, entity_id, revision, reason, payload, prev_hash, hash)
		SELECT $1, $2, $3, $4, $5, $6, $7, $8, $9, p.payload, $10,
		       etchlog_audit_hash($10, $2, $3, $4, $5, $6, $7, $8, $9, p.payload)
		FROM (SELECT to_jsonb(r) AS payload FROM `+t.name+` r WHERE r.id = $7 AND r.revision = $8) p`,
		m.Site, seq+1, m.CreatedAt, m.CreatedBy, action, t.entity, m.ID, m.Revision, m.Reason, prev)
	return err
}

// AuditFilter selects audit events.
type AuditFilter struct {
	Entity   string
	EntityID *uuid.UUID
	Actor    string
	From, To *time.Time
}

// AuditEvents lists a site's events in chain order, after sequence number `after`.
func (s *Store) AuditEvents(ctx context.Context, site string, af AuditFilter, after int64, limit int) ([]AuditEvent, error) {
	if limit <= 0 || limit > MaxPageSize {
		limit = MaxPageSize
	}
	rows, _ := s.pool.Query(ctx, `
		SELECT site, seq, at, actor, action, entity, entity_id, revision, reason, payload, prev_hash, hash
		FROM audit_events
		WHERE site = $1 AND seq > $2
		  AND ($3 = '' OR entity = $3)
		  AND ($4::uuid IS NULL OR entity_id = $4)
		  AND ($5 = '' OR actor = $5)
		  AND ($6::timestamptz IS NULL OR at >= $6)
		  AND ($7::timestamptz IS NULL OR at < $7)
		ORDER BY seq
		LIMIT $8`, site, after, af.Entity, af.EntityID, af.Actor, af.From, af.To, limit)
	ev, err := pgx.CollectRows(rows, pgx.RowToStructByName[AuditEvent])
	if err != nil {
		return nil, fmt.Errorf("db: audit events: %w", err)
	}
	return ev, nil
}

// Verification is the outcome of checking a site's audit chain and records.
type Verification struct {
	Events   int64     `json:"events_checked"`
	Records  int64     `json:"record_revisions_checked"`
	OK       bool      `json:"ok"`
	Problems []string  `json:"problems"`
	At       time.Time `json:"verified_at"`
}

// record tables whose revisions the audit chain covers.
var auditedTables = []table{procedures, qualificationRecords, coupons, measurements, calibrationTable, activationTable,
	ruleSetTable, rangesTable, productionBatchTable, users, signOffTable}

// VerifyAudit recomputes every link of the site's chain and compares every
// stored record revision with the content its audit event recorded. Any edit
// made behind the service's back (with the append-only triggers disabled)
// shows up as a broken link, a changed payload, or a revision with no event.
func (s *Store) VerifyAudit(ctx context.Context, site string) (Verification, error) {
	v := Verification{At: s.now(), Problems: []string{}}
	rows, err := s.long.Query(ctx, `
		SELECT seq, prev_hash, hash,
		       etchlog_audit_hash(prev_hash, seq, at, actor, action, entity, entity_id, revision, reason, payload)
		FROM audit_events WHERE site = $1 ORDER BY seq`, site)
	if err != nil {
		return v, fmt.Errorf("db: verify audit: %w", err)
	}
	prev := make([]byte, 32)
	var want int64 = 1
	for rows.Next() {
		var seq int64
		var p, h, re []byte
		if err := rows.Scan(&seq, &p, &h, &re); err != nil {
			rows.Close()
			return v, err
		}
		v.Events++
		switch {
		case seq != want:
			v.Problems = append(v.Problems, fmt.Sprintf("event %d: expected sequence %d (an event is missing)", seq, want))
		case !bytes.Equal(p, prev):
			v.Problems = append(v.Problems, fmt.Sprintf("event %d: previous-hash link broken", seq))
		case !bytes.Equal(h, re):
			v.Problems = append(v.Problems, fmt.Sprintf("event %d: content does not match its hash", seq))
		}
		prev, want = h, seq+1
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return v, err
	}
	for _, t := range auditedTables {
		rows, err := s.long.Query(ctx, `
			SELECT coalesce(r.id, e.entity_id), coalesce(r.revision, e.revision),
			       r.id IS NULL, e.seq IS NULL, coalesce(to_jsonb(r) = e.payload, false)
			FROM (SELECT * FROM `+t.name+` WHERE site = $1) r
			FULL JOIN (SELECT * FROM audit_events WHERE site = $1 AND entity = $2) e
			  ON e.entity_id = r.id AND e.revision = r.revision`, site, t.entity)
		if err != nil {
			return v, fmt.Errorf("db: verify %s: %w", t.name, err)
		}
		for rows.Next() {
			var id uuid.UUID
			var rev int
			var noRow, noEvent, same bool
			if err := rows.Scan(&id, &rev, &noRow, &noEvent, &same); err != nil {
				rows.Close()
				return v, err
			}
			if !noRow {
				v.Records++
			}
			switch {
			case noRow:
				v.Problems = append(v.Problems, fmt.Sprintf("%s %s revision %d: recorded in the audit chain but missing from the table", t.entity, id, rev))
			case noEvent:
				v.Problems = append(v.Problems, fmt.Sprintf("%s %s revision %d: has no audit event", t.entity, id, rev))
			case !same:
				v.Problems = append(v.Problems, fmt.Sprintf("%s %s revision %d: differs from the content recorded when it was written", t.entity, id, rev))
			}
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return v, err
		}
	}
	v.OK = len(v.Problems) == 0
	return v, nil
}
