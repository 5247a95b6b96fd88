package db

import (
	"bytes"
	"context"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db/logfmt"
)

// The export's last part (export_leaves.go writes the leaves before it):
// every stored fact the log does not hold (a row without a leaf, a pending
// leaf the sequencer refused), written as an unlogged line.

// exportUnlogged emits every stored fact with no leaf: rows with neither a
// leaf nor an authentic pending leaf, and pending leaves the sequencer
// refused. Authentic pending leaves are simply not logged yet. A kind in
// claimed had its table read whole beside its leaves: only the rows no leaf
// claimed are checked, not the table again.
func (s *Store) exportUnlogged(ctx context.Context, tx pgx.Tx, site string, claimed map[string]*unclaimed, emit func(string, any) error) (int64, error) {
	var n int64
	key := s.logKey()
	rows, _ := tx.Query(ctx, `SELECT kind, version, record_id, revision, leaf_hash, tag, record_ids, leaf_hashes
		FROM log_pending WHERE site = $1 ORDER BY seq`, site)
	type pending struct {
		Kind      string    `db:"kind"`
		Version   int       `db:"version"`
		ID        uuid.UUID `db:"record_id"`
		Rev       int       `db:"revision"`
		Hash, Tag []byte
		IDs       [][16]byte // a pending entry of many leaves (log_many.go)
		Hashes    []byte
	}
	pend, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (pending, error) {
		var p pending
		return p, r.Scan(&p.Kind, &p.Version, &p.ID, &p.Rev, &p.Hash, &p.Tag, &p.IDs, &p.Hashes)
	})
	if err != nil {
		return n, err
	}
	var kind string
	var id uuid.UUID
	for _, p := range pend {
		if p.IDs != nil {
			m, err := s.exportUnloggedMany(ctx, tx, site, pendingLeaf{Kind: p.Kind, Version: p.Version, Revision: p.Rev,
				LeafHash: p.Hash, Tag: p.Tag, RecordIDs: p.IDs, LeafHashes: p.Hashes}, emit)
			n += m
			if err != nil {
				return n, err
			}
			continue
		}
		why := ""
		switch {
		case p.Hash == nil || key == nil || !key.TagOK(site, p.Hash, p.Tag):
			why = "its pending leaf was not written by the service (no valid tag)"
		default: // not yet in the tree: the row must still be what the leaf commits to
			h, err := encodeStored(ctx, tx, p.Kind, p.Version, site, p.ID, p.Rev)
			if err != nil || !bytes.Equal(h, p.Hash) {
				why = "the stored row no longer matches its pending leaf (altered before it was logged)"
			}
		}
		if why != "" {
			n++
			if err := emit(logfmt.LineUnlogged, logfmt.Unlogged{Kind: p.Kind, RecordID: p.ID.String(), Revision: p.Rev, Why: why}); err != nil {
				return n, err
			}
		}
	}
	var rev int
	rows, _ = tx.Query(ctx, `SELECT kind, record_id, revision, why FROM log_rejected WHERE site = $1 ORDER BY seq`, site)
	var why string
	if _, err := pgx.ForEachRow(rows, []any{&kind, &id, &rev, &why}, func() error {
		n++
		return emit(logfmt.LineUnlogged, logfmt.Unlogged{Kind: kind, RecordID: id.String(), Revision: rev, Why: "refused by the sequencer: " + why})
	}); err != nil {
		return n, err
	}
	for _, k := range registeredKinds() {
		rev := k.revisionExpr("r")
		q := `SELECT r.id, ` + rev + ` FROM ` + k.Table + ` r WHERE r.site = $1`
		args := []any{site, k.Kind}
		if u := claimed[k.Kind]; u != nil && u.k.Table == k.Table && u.k.Revisioned == k.Revisioned {
			// The leaves' pass read this table whole and kept the rows no
			// leaf claimed: only those can lack a leaf.
			if len(u.ids) == 0 {
				continue
			}
			q = `SELECT r.id, r.revision FROM unnest($3::uuid[], $4::integer[]) r(id, revision) WHERE true`
			rev, args = "r.revision", append(args, u.ids, u.revs)
		}
		rows, _ := tx.Query(ctx, q+`
			AND NOT EXISTS (SELECT 1 FROM log_leaves lg WHERE lg.record_id = r.id AND lg.kind = $2 AND (lg.site = $1) IS TRUE AND lg.revision = `+rev+`)
			AND NOT EXISTS (SELECT 1 FROM log_pending p WHERE p.site = $1 AND p.record_id = r.id AND p.revision = `+rev+` AND p.kind = $2)
			AND (r.id, `+rev+`) NOT IN (SELECT c.id, p.revision FROM log_pending p, unnest(p.record_ids) c(id) WHERE p.site = $1 AND p.kind = $2)
			AND NOT EXISTS (SELECT 1 FROM log_rejected x WHERE x.site = $1 AND x.record_id = r.id AND x.revision = `+rev+` AND x.kind = $2)
			ORDER BY r.id`, args...)
		var r int
		if _, err := pgx.ForEachRow(rows, []any{&id, &r}, func() error {
			n++
			return emit(logfmt.LineUnlogged, logfmt.Unlogged{Kind: k.Kind, RecordID: id.String(), Revision: r, Why: "no leaf in the log"})
		}); err != nil {
			return n, err
		}
	}
	return n, nil
}

// exportUnloggedMany emits the facts named by one pending entry of many
// leaves that will not enter the log as they are: all of them when the
// entry's tag or digest is not the service's, else each whose stored row no
// longer encodes to its leaf hash.
func (s *Store) exportUnloggedMany(ctx context.Context, tx pgx.Tx, site string, p pendingLeaf, emit func(string, any) error) (int64, error) {
	var n int64
	why := ""
	if s.logKey() == nil {
		why = "its pending leaf was not written by the service (no valid tag)"
	} else if manyRefusal(s, site, p) != "" {
		why = "its pending entry was not written by the service (no valid tag, or not what the tag covers)"
	}
	for i, id := range p.RecordIDs {
		w := why
		if w == "" {
			h, err := encodeStored(ctx, tx, p.Kind, p.Version, site, id, p.Revision)
			if err != nil || !bytes.Equal(h, p.LeafHashes[32*i:32*i+32]) {
				w = "the stored row no longer matches its pending leaf (altered before it was logged)"
			}
		}
		if w != "" {
			n++
			if err := emit(logfmt.LineUnlogged, logfmt.Unlogged{Kind: p.Kind, RecordID: uuid.UUID(id).String(), Revision: p.Revision, Why: w}); err != nil {
				return n, err
			}
		}
	}
	return n, nil
}

// identifierOK reports whether a kind name can be part of an SQL identifier.
func identifierOK(s string) bool {
	for _, r := range s {
		if !(r >= 'a' && r <= 'z' || r == '_' || r >= '0' && r <= '9') {
			return false
		}
	}
	return s != "" && len(s) < 40
}

func identifier(s string) string {
	if identifierOK(s) {
		return s
	}
	return "x"
}
