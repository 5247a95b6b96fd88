package db

import (
	"context"
	"fmt"
	"slices"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

	"etchlog/db/logfmt"
)

// LeafEntry names one recorded fact for the log: its kind, the row (site,
// id, revision) and who did what when. Actor, Action and At are shown in the
// log's listing; the leaf itself commits to the row's columns.
type LeafEntry struct {
	Kind     string
	Site     string
	ID       uuid.UUID
	Revision int // 1 for kinds without revisions
	Actor    string
	Action   string // create, correct, void, activate, ...
	Reason   string // why, for corrections, voids, activations, narrowings
	At       time.Time
}

// AppendLeaf is the one way to log a fact: inside the write transaction tx,
// after the row is inserted, it reads the row back, encodes it with the
// kind's registered column list (RegisterLeafKind) and adds a pending leaf,
// tagged with the service's key. The leaf is committed with the row, or not
// at all; the sequencer gives it its log index after the commit.
func (s *Store) AppendLeaf(ctx context.Context, tx pgx.Tx, e LeafEntry) error {
	k, err := leafKind(e.Kind, 0)
	if err != nil {
		return err
	}
	rows, _ := tx.Query(ctx, k.selectRow(), e.Site, e.ID, e.Revision)
	return s.appendRows(ctx, tx, k, rows, e)
}

// appendRows logs every row of rows (columns: k.Columns) as a fact of kind
// k; e gives the site, actor, action and time, and its ID and Revision are
// taken from each row. It is AppendLeaf for a whole statement's rows, e.g.
// an INSERT ... RETURNING or a batch of production records.
func (s *Store) appendRows(ctx context.Context, tx pgx.Tx, k LeafKind, rows pgx.Rows, e LeafEntry) error {
	key := s.logKey()
	if key == nil {
		rows.Close()
		return ErrNoLogKey
	}
	idCol, revCol := slices.Index(k.Columns, "id"), slices.Index(k.Columns, "revision")
	var pending [][]any
	for rows.Next() {
		f, err := factOf(k, rows)
		if err != nil {
			rows.Close()
			return err
		}
		id, err := uuid.Parse(f.Fields[idCol].Value)
		if err != nil {
			rows.Close()
			return fmt.Errorf("db: %s row id: %w", k.Kind, err)
		}
		rev := 1
		if k.Revisioned && revCol >= 0 {
			fmt.Sscan(f.Fields[revCol].Value, &rev) //nolint:errcheck // an integer column
		}
		h := f.LeafHash()
		pending = append(pending, []any{e.Site, k.Kind, k.Version, pgtype.UUID{Bytes: id, Valid: true}, rev, h, key.Tag(e.Site, h), e.Actor, e.Action, e.Reason, e.At})
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return fmt.Errorf("db: log %s: %w", k.Kind, mapError(err))
	}
	switch len(pending) {
	case 0:
		return fmt.Errorf("db: log %s %s revision %d: %w", k.Kind, e.ID, e.Revision, ErrNotFound)
	case 1:
		_, err := tx.Exec(ctx, `INSERT INTO log_pending (`+pendingColumns+`)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)`, pending[0]...)
		return mapError(err)
	}
	_, err := tx.CopyFrom(ctx, pgx.Identifier{"log_pending"}, pendingColumnList, pgx.CopyFromRows(pending))
	return mapError(err)
}

const pendingColumns = "site, kind, version, record_id, revision, leaf_hash, tag, actor, action, reason, at"

var pendingColumnList = []string{"site", "kind", "version", "record_id", "revision", "leaf_hash", "tag", "actor", "action", "reason", "at"}

// logKey is the key that tags pending leaves and signs checkpoints.
func (s *Store) logKey() *logfmt.Signer { return s.key.Load() }

// SetLogKey installs the log's signing key (a private key made by
// logfmt.GenerateKey, "etchlog keygen"). Writes fail until a key is set.
func (s *Store) SetLogKey(skey string) error {
	k, err := logfmt.NewSigner(skey)
	if err != nil {
		return err
	}
	s.key.Store(k)
	return nil
}

// LogPublicKey is the public key that verifies the log's checkpoints.
func (s *Store) LogPublicKey() string {
	if k := s.logKey(); k != nil {
		return k.VerifierKey()
	}
	return ""
}
