package db

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"fmt"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// A write of many facts of one kind at once (a chunk of a production
// stream) logs them with one pending entry instead of a pending row each
// (migration 000024): the entry names its rows in order (record_ids) with
// the leaf hash of each (leaf_hashes, 32 bytes apiece), encoded by the one
// encoding of stored rows (factFrom), and carries a digest of all of it
// (leaf_hash) tagged with the service's key (logfmt.Signer.TagMany). The
// sequencer checks the tag and the digest and gives every named row a leaf
// of its own, in order, as if each had had its own pending row; so the log,
// its proofs, export and verification see one leaf per fact either way.

// ManyLeaves is a prepared pending entry for many facts of one kind.
type ManyLeaves struct {
	kind     LeafKind
	entry    LeafEntry // site, actor, action, reason, time; ID names the entry itself
	ids      [][16]byte
	hashes   []byte // 32 bytes per id, in order
	digest   []byte
	tag      []byte
	revision int
}

// Len is how many facts the entry names.
func (m *ManyLeaves) Len() int { return len(m.ids) }

// manyDigest commits to a pending entry of many leaves: its kind, version
// and revision, then every row's id and leaf hash in order.
func manyDigest(kind string, version, revision int, ids [][16]byte, hashes []byte) []byte {
	h := sha256.New()
	h.Write([]byte("etchlog pending many\x00"))
	h.Write([]byte(kind))
	h.Write([]byte{0})
	var n [8]byte
	binary.BigEndian.PutUint32(n[:4], uint32(version))
	binary.BigEndian.PutUint32(n[4:], uint32(revision))
	h.Write(n[:])
	for i, id := range ids {
		h.Write(id[:])
		h.Write(hashes[32*i : 32*i+32])
	}
	return h.Sum(nil)
}

// newManyLeaves prepares the pending entry naming ids (facts of kind k at
// revision rev) with their leaf hashes, in that order; e.ID names the entry
// (a fresh id when zero), e.Site, Actor, Action, Reason and At go to every
// leaf. It needs no transaction: a writer may prepare it ahead.
func (s *Store) newManyLeaves(k LeafKind, e LeafEntry, rev int, ids []uuid.UUID, hashes [][]byte) (*ManyLeaves, error) {
	key := s.logKey()
	if key == nil {
		return nil, ErrNoLogKey
	}
	if len(ids) == 0 || len(ids) != len(hashes) {
		return nil, fmt.Errorf("db: log %s: %d ids and %d leaf hashes", k.Kind, len(ids), len(hashes))
	}
	if e.ID == uuid.Nil {
		var err error
		if e.ID, err = uuid.NewV7(); err != nil {
			return nil, err
		}
	}
	m := &ManyLeaves{kind: k, entry: e, ids: make([][16]byte, len(ids)), hashes: make([]byte, 0, 32*len(ids)), revision: rev}
	for i, h := range hashes {
		if len(h) != 32 {
			return nil, fmt.Errorf("db: log %s %s: a leaf hash of %d bytes", k.Kind, ids[i], len(h))
		}
		m.hashes = append(m.hashes, h...)
		m.ids[i] = ids[i]
	}
	m.digest = manyDigest(k.Kind, k.Version, rev, m.ids, m.hashes)
	m.tag = key.TagMany(e.Site, m.digest)
	return m, nil
}

// appendMany adds the prepared entry m to log_pending inside the write
// transaction tx, after its rows are stored: its leaves are committed with
// the rows, or not at all. On a pipelined transaction the statement is
// queued and leaves with the next one that waits for an answer, or with
// COMMIT.
func appendMany(ctx context.Context, tx pgx.Tx, m *ManyLeaves) error {
	e := m.entry
	return queueExec(ctx, tx, `INSERT INTO log_pending (`+pendingColumns+`, record_ids, leaf_hashes)
		VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13)`,
		e.Site, m.kind.Kind, m.kind.Version, e.ID, m.revision, m.digest, m.tag, e.Actor, e.Action, e.Reason, e.At, m.ids, m.hashes)
}

// manyRefusal says why the sequencer cannot take a pending entry of many
// leaves ("" when it can): its tag must be the service's tag of its digest,
// and the digest must be the one of its kind, version, revision, ids and hashes.
func manyRefusal(s *Store, site string, p pendingLeaf) string {
	key := s.logKey()
	switch {
	case p.LeafHash == nil || !key.TagManyOK(site, p.LeafHash, p.Tag):
		return "pending entry of many leaves without a valid tag: not written by the service"
	case len(p.LeafHashes) != 32*len(p.RecordIDs) ||
		!bytes.Equal(p.LeafHash, manyDigest(p.Kind, p.Version, p.Revision, p.RecordIDs, p.LeafHashes)):
		return "pending entry of many leaves whose rows or hashes differ from what its tag covers"
	}
	return ""
}
