package db

import (
	"context"
	"errors"
	"fmt"
	"strconv"
	"strings"
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
// the audit chain, and its business columns in the order of the record's values().
type table struct {
	name   string
	entity string
	fields []string
}

func (t table) columns() string { return metaColumns + ", " + strings.Join(t.fields, ", ") }

// insert writes one revision row and its pending leaf, encoded from the row
// as stored (INSERT ... RETURNING the kind's columns).
func (s *Store) insert(ctx context.Context, tx pgx.Tx, t table, m Meta, action string, values []any) error {
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
	rows, _ := tx.Query(ctx, q, args...)
	if err := s.appendRows(ctx, tx, k, rows, m.leafEntry(t.entity, action)); err != nil {
		return err
	}
	return afterWrite(ctx, tx, t, m) // derived data (flags) kept in step, same transaction
}

// leafEntry names the revision m for the log.
func (m Meta) leafEntry(kind, action string) LeafEntry {
	return LeafEntry{Kind: kind, Site: m.Site, ID: m.ID, Revision: m.Revision, Actor: m.CreatedBy, Action: action, Reason: m.Reason, At: m.CreatedAt}
}

// lockLatest locks the latest revision of a record and returns it.
func (t table) lockLatest(ctx context.Context, tx pgx.Tx, site string, id uuid.UUID) (rev int, voided bool, err error) {
	q := "SELECT revision, voided FROM " + t.name + `
		WHERE site = $1 AND id = $2
		ORDER BY revision DESC LIMIT 1 FOR UPDATE`
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

// voidLatest copies the latest revision forward as a voided revision and logs it.
func (s *Store) voidLatest(ctx context.Context, tx pgx.Tx, t table, m Meta) error {
	k, err := leafKind(t.entity, 0)
	if err != nil {
		return err
	}
	fields := strings.Join(t.fields, ", ")
	q := "INSERT INTO " + t.name + " (" + metaColumns + ", " + fields + `)
		SELECT site, id, $3, $4, $5, $6, true, ` + fields + " FROM " + t.name + `
		WHERE site = $1 AND id = $2 AND revision = $7
		RETURNING ` + strings.Join(k.Columns, ", ")
	rows, _ := tx.Query(ctx, q, m.Site, m.ID, m.Revision, m.CreatedAt, m.CreatedBy, m.Reason, m.Revision-1)
	if err := s.appendRows(ctx, tx, k, rows, m.leafEntry(t.entity, "void")); err != nil {
		return err
	}
	return afterWrite(ctx, tx, t, m)
}

// tx runs fn in one transaction and commits once.
func (s *Store) tx(ctx context.Context, fn func(tx pgx.Tx) error) error {
	tx, err := s.pool.Begin(ctx)
	if err != nil {
		return err
	}
	defer tx.Rollback(ctx) //nolint:errcheck // no-op after Commit
	if err := fn(tx); err != nil {
		return err
	}
	if err := tx.Commit(ctx); err != nil {
		return err
	}
	s.kickSequencer()
	return nil
}

// create writes revision 1 of a new record after check (run in the same transaction) passes.
func (s *Store) create(ctx context.Context, a Actor, t table, check func(pgx.Tx) error, values []any) (Meta, error) {
	id, err := uuid.NewV7()
	if err != nil {
		return Meta{}, err
	}
	m := Meta{Site: a.Site, ID: id, Revision: 1, CreatedAt: s.now(), CreatedBy: a.Name}
	err = s.tx(ctx, func(tx pgx.Tx) error {
		if check != nil {
			if err := check(tx); err != nil {
				return err
			}
		}
		return s.insert(ctx, tx, t, m, "create", values)
	})
	if err != nil {
		return Meta{}, fmt.Errorf("db: create %s: %w", t.entity, err)
	}
	return m, nil
}

// correct writes the next revision of a record with new values and a reason.
func (s *Store) correct(ctx context.Context, a Actor, t table, id uuid.UUID, ch Change, check func(pgx.Tx) error, values []any) (Meta, error) {
	m := Meta{Site: a.Site, ID: id, Revision: ch.BaseRevision + 1, CreatedAt: s.now(), CreatedBy: a.Name, Reason: ch.Reason}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := t.checkBase(ctx, tx, a.Site, id, ch); err != nil {
			return err
		}
		if check != nil {
			if err := check(tx); err != nil {
				return err
			}
		}
		return s.insert(ctx, tx, t, m, "correct", values)
	})
	if err != nil {
		return Meta{}, fmt.Errorf("db: correct %s %s: %w", t.entity, id, err)
	}
	return m, nil
}

// void marks a record voided by writing its next revision; nothing is deleted.
func (s *Store) void(ctx context.Context, a Actor, t table, id uuid.UUID, ch Change) (Meta, error) {
	m := Meta{Site: a.Site, ID: id, Revision: ch.BaseRevision + 1, CreatedAt: s.now(), CreatedBy: a.Name, Reason: ch.Reason, Voided: true}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := t.checkBase(ctx, tx, a.Site, id, ch); err != nil {
			return err
		}
		return s.voidLatest(ctx, tx, t, m)
	})
	if err != nil {
		return Meta{}, fmt.Errorf("db: void %s %s: %w", t.entity, id, err)
	}
	return m, nil
}

// RecordID returns the record's id.
func (m Meta) RecordID() uuid.UUID { return m.ID }
