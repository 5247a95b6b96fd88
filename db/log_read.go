package db

import (
	"context"
	"errors"
	"fmt"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/transparency-dev/merkle/proof"
	"github.com/transparency-dev/merkle/rfc6962"

	"etchlog/db/logfmt"
)

// LogCheckpoint is a signed statement of a site's log size and root hash, in
// the signed-note checkpoint format (origin line "etchlog/<site>", size,
// base64 root, blank line, Ed25519 signature lines).
type LogCheckpoint struct {
	Size uint64 `json:"size"`
	Root []byte `json:"root"`
	Note string `json:"checkpoint"`
}

// Checkpoint returns the site's latest signed checkpoint, or, when size > 0,
// the checkpoint of exactly that size. An empty log's checkpoint (size 0,
// the SHA-256 of nothing) is signed on demand.
func (s *Store) Checkpoint(ctx context.Context, site string, size uint64) (LogCheckpoint, error) {
	s.awaitLogged(ctx, site)
	var c LogCheckpoint
	err := s.pool.QueryRow(ctx, `SELECT size, root, note FROM log_checkpoints
		WHERE site = $1 AND ($2::bigint = 0 OR size = $2::bigint) ORDER BY size DESC LIMIT 1`, site, int64(size)).Scan(&c.Size, &c.Root, &c.Note)
	switch {
	case errors.Is(err, pgx.ErrNoRows) && size == 0:
		key := s.logKey()
		if key == nil {
			return c, ErrNoLogKey
		}
		c.Root = rfc6962.DefaultHasher.EmptyRoot()
		c.Note, err = logfmt.SignCheckpoint(key, site, 0, c.Root)
		return c, err
	case errors.Is(err, pgx.ErrNoRows):
		return c, fmt.Errorf("db: no checkpoint of size %d: %w", size, ErrNotFound)
	}
	return c, err
}

// InclusionProof proves that one logged fact is leaf Index of the tree whose
// signed checkpoint is Checkpoint (RFC 9162 section 2.1.3).
type InclusionProof struct {
	Entity     string        `json:"entity"`
	EntityID   uuid.UUID     `json:"entity_id"`
	Revision   int           `json:"revision"`
	Index      uint64        `json:"index"`
	LeafHash   []byte        `json:"leaf_hash"`
	Hashes     [][]byte      `json:"hashes"`
	Checkpoint LogCheckpoint `json:"checkpoint"`
}

// Inclusion proves a record revision's leaf is in the site's latest checkpoint.
func (s *Store) Inclusion(ctx context.Context, site, kind string, id uuid.UUID, rev int) (InclusionProof, error) {
	p := InclusionProof{Entity: kind, EntityID: id, Revision: rev}
	cp, err := s.Checkpoint(ctx, site, 0)
	if err != nil {
		return p, err
	}
	var idx int64
	err = s.pool.QueryRow(ctx, `SELECT leaf_index, leaf_hash FROM log_leaves WHERE `+leafOfRevision,
		site, kind, id, rev).Scan(&idx, &p.LeafHash)
	if errors.Is(err, pgx.ErrNoRows) || (err == nil && uint64(idx) >= cp.Size) {
		return p, fmt.Errorf("db: %s %s revision %d is not in the log yet: %w", kind, id, rev, ErrNotFound)
	}
	if err != nil {
		return p, err
	}
	nodes, err := proof.Inclusion(uint64(idx), cp.Size)
	if err != nil {
		return p, err
	}
	p.Index, p.Checkpoint = uint64(idx), cp
	p.Hashes, err = s.proofHashes(ctx, site, nodes)
	return p, err
}

// ConsistencyProof proves that the tree of size From is a prefix of the tree
// of size To (RFC 9162 section 2.1.4): the log only grew between them.
type ConsistencyProof struct {
	From       uint64        `json:"from"`
	To         uint64        `json:"to"`
	Hashes     [][]byte      `json:"hashes"`
	Checkpoint LogCheckpoint `json:"checkpoint"`
}

// Consistency proves the log of size from is a prefix of the log of size to
// (0: the latest checkpoint).
func (s *Store) Consistency(ctx context.Context, site string, from, to uint64) (ConsistencyProof, error) {
	cp, err := s.Checkpoint(ctx, site, to)
	if err != nil {
		return ConsistencyProof{}, err
	}
	if from > cp.Size {
		return ConsistencyProof{}, &FieldError{Field: "from", Reason: fmt.Sprintf("the log has %d leaves; from must not exceed it", cp.Size)}
	}
	nodes, err := proof.Consistency(from, cp.Size)
	if err != nil {
		return ConsistencyProof{}, err
	}
	hashes, err := s.proofHashes(ctx, site, nodes)
	return ConsistencyProof{From: from, To: cp.Size, Hashes: hashes, Checkpoint: cp}, err
}

// proofHashes reads the stored node hashes a proof needs and folds the ones
// that make up its ephemeral node: a level-0 node is a leaf's hash, read
// from its log_leaves row, a higher one from log_nodes.
func (s *Store) proofHashes(ctx context.Context, site string, nodes proof.Nodes) ([][]byte, error) {
	levels, idxs := make([]int16, len(nodes.IDs)), make([]int64, len(nodes.IDs))
	for i, id := range nodes.IDs {
		levels[i], idxs[i] = int16(id.Level), int64(id.Index)
	}
	rows, _ := s.pool.Query(ctx, `SELECT CASE WHEN w.lvl = 0
			THEN (SELECT l.leaf_hash FROM log_leaves l WHERE l.site = $1 AND l.leaf_index = w.idx)
			ELSE (SELECT n.hash FROM log_nodes n WHERE n.site = $1 AND n.tree_level = w.lvl AND n.tree_index = w.idx) END
		FROM unnest($2::smallint[], $3::bigint[]) WITH ORDINALITY AS w(lvl, idx, ord) ORDER BY w.ord`, site, levels, idxs)
	hashes, err := pgx.CollectRows(rows, pgx.RowTo[[]byte])
	if err != nil {
		return nil, err
	}
	for i, h := range hashes {
		if len(h) != 32 {
			return nil, fmt.Errorf("db: log node %d/%d of site %q is missing", levels[i], idxs[i], site)
		}
	}
	out, err := nodes.Rehash(hashes, logfmt.HashChildren)
	if out == nil {
		out = [][]byte{}
	}
	return out, err
}

// Fact encodes the stored row of a logged kind as the fact its leaf commits
// to (for proofs shown with their fact, and for tests that play a forger).
func (s *Store) Fact(ctx context.Context, kind, site string, id uuid.UUID, rev int) (logfmt.Fact, error) {
	k, err := leafKind(kind, 0)
	if err != nil {
		return logfmt.Fact{}, err
	}
	rows, _ := s.pool.Query(ctx, k.selectRow(), site, id, rev)
	defer rows.Close()
	if !rows.Next() {
		if err := rows.Err(); err != nil {
			return logfmt.Fact{}, err
		}
		return logfmt.Fact{}, fmt.Errorf("db: %s %s revision %d: %w", kind, id, rev, ErrNotFound)
	}
	return factOf(k, rows)
}

// AwaitLogged waits until every leaf of the site pending now is sequenced,
// or LogWait passes (then it reports ErrNotLogged).
func (s *Store) AwaitLogged(ctx context.Context, site string) error {
	s.awaitLogged(ctx, site)
	var left bool
	if err := s.pool.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM log_pending WHERE site = $1)`, site).Scan(&left); err != nil {
		return err
	}
	if left {
		return ErrNotLogged
	}
	return nil
}

// ErrNotLogged means pending leaves were still waiting for the sequencer.
var ErrNotLogged = errors.New("the log sequencer has not integrated every pending leaf")

// leafOfRevision is the condition that finds the leaf of revision $4 of the
// record $3 of kind $2 at site $1 through the leaves' key by record,
// (record_id, kind, site, revision), the site a filter no index can take
// (migration 000056: with it as an index condition, a plan made under
// statistics that did not know the site's leaves read every leaf of the site
// through another index that leads with site).
const leafOfRevision = `record_id = $3 AND kind = $2 AND (site = $1) IS TRUE AND revision = $4`
