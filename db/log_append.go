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
	return s.appendReturned(ctx, tx, k, e, k.selectRow(), e.Site, e.ID, e.Revision)
}

// appendReturned logs the one row that the statement sql returns (columns:
// k.Columns), a SELECT of the stored row or an INSERT ... RETURNING it. On
// a pipelined write the statement leaves with those queued before it, and
// the pending leaf with those queued after.
func (s *Store) appendReturned(ctx context.Context, tx pgx.Tx, k LeafKind, e LeafEntry, sql string, args ...any) error {
	t, ok := tx.(*pipeTx)
	if !ok {
		rows, _ := tx.Query(ctx, sql, args...)
		return s.appendRows(ctx, tx, k, rows, e)
	}
	t.queue(sql, args, func(rows pgx.Rows) error {
		pending, err := s.pendingLeaves(k, rows, e)
		if rows.Err() != nil {
			return nil // the statement's own error is reported
		}
		if err != nil {
			return err
		}
		t.queue(`INSERT INTO log_pending (`+pendingColumns+`)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)`, pending[0], nil, false)
		return nil
	}, false)
	return nil
}

// appendRows logs every row of rows (columns: k.Columns) as a fact of kind
// k; e gives the site, actor, action and time, and its ID and Revision are
// taken from each row. It is AppendLeaf for a whole statement's rows, e.g.
// an INSERT ... RETURNING or a batch of production records.
func (s *Store) appendRows(ctx context.Context, tx pgx.Tx, k LeafKind, rows pgx.Rows, e LeafEntry) error {
	pending, err := s.pendingLeaves(k, rows, e)
	if err != nil {
		return err
	}
	if len(pending) == 1 {
		_, err := tx.Exec(ctx, `INSERT INTO log_pending (`+pendingColumns+`)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)`, pending[0]...)
		return mapError(err)
	}
	_, err = tx.CopyFrom(ctx, pgx.Identifier{"log_pending"}, pendingColumnList, pgx.CopyFromRows(pending))
	return mapError(err)
}

// pendingLeaves encodes every row of rows (columns: k.Columns) as a fact of
// kind k and returns the log_pending rows that log them, tagged with the
// service's key. It closes rows; no row at all is ErrNotFound.
func (s *Store) pendingLeaves(k LeafKind, rows pgx.Rows, e LeafEntry) ([][]any, error) {
	defer rows.Close()
	key := s.logKey()
	if key == nil {
		return nil, ErrNoLogKey
	}
	idCol, revCol := slices.Index(k.Columns, "id"), slices.Index(k.Columns, "revision")
	var pending [][]any
	for rows.Next() {
		f, err := factOf(k, rows)
		if err != nil {
			return nil, err
		}
		id, err := uuid.Parse(f.Fields[idCol].Value)
		if err != nil {
			return nil, fmt.Errorf("db: %s row id: %w", k.Kind, err)
		}
		rev := 1
		if k.Revisioned && revCol >= 0 {
			fmt.Sscan(f.Fields[revCol].Value, &rev) //nolint:errcheck // an integer column
		}
		pending = append(pending, pendingRow(key, k, e, id, rev, f))
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("db: log %s: %w", k.Kind, mapError(err))
	}
	if len(pending) == 0 {
		return nil, fmt.Errorf("db: log %s %s revision %d: %w", k.Kind, e.ID, e.Revision, ErrNotFound)
	}
	return pending, nil
}

// pendingRow is the log_pending row (pendingColumns) of revision rev of
// record id, the fact f of kind k, tagged with key.
func pendingRow(key *logfmt.Signer, k LeafKind, e LeafEntry, id uuid.UUID, rev int, f logfmt.Fact) []any {
	h := f.LeafHash()
	return []any{e.Site, k.Kind, k.Version, pgtype.UUID{Bytes: id, Valid: true}, rev, h, key.Tag(e.Site, h), e.Actor, e.Action, e.Reason, e.At}
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
