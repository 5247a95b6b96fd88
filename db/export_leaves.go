package db

import (
	"bytes"
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"
	"github.com/jackc/pgx/v5/pgxpool"

	"etchlog/db/logfmt"
)

// leafStream reads one (kind, version)'s leaves in index order through a
// server-side cursor, joined to their stored rows.
type leafStream struct {
	name  string
	k     LeafKind
	known bool
	buf   []leafOut
	done  bool
	fds   []pgconn.FieldDescription // the joined row's columns (join path)
	rows  *rowWindow                // the kind's rows, read beside the leaves; nil: joined in the cursor
}

// leafOut is one leaf on its way from the goroutine that reads the database
// to the one that encodes and writes it: its listing, and the raw values of
// its row (owned, in PostgreSQL's binary format) for the writer to encode.
type leafOut struct {
	l   logfmt.ExportLeaf
	k   LeafKind
	fds []pgconn.FieldDescription // nil: l is complete (missing row or unknown kind)
	raw [][]byte
}

// kindVersion is one (kind, version) with leaves at the site.
type kindVersion struct {
	Kind    string `db:"kind"`
	Version int    `db:"version"`
}

// leafFetch is how many leaves one FETCH of a kind's cursor takes, and
// leafBatch how many leaves go from the reader to the writer at a time.
const (
	leafFetch = 5000
	leafBatch = 1000
)

// exportLeaves emits every leaf of the site in index order, its fact encoded
// again from the stored row as it is now. The leaves of each kind come from
// their own cursor; a merge on the index puts them back in log order, so the
// export streams in constant memory. One goroutine reads the database (the
// cursors, the rows) while the caller's encodes and emits the leaves it has
// read, so neither waits for the other. It returns, for each kind whose rows
// were read beside its leaves without overflowing the window, the rows that
// no leaf claimed (every row with no leaf is among them; see unlogged).
func exportLeaves(ctx context.Context, pool *pgxpool.Pool, tx pgx.Tx, site string, emit func(string, any) error) (int64, map[string]*unclaimed, error) {
	rows, _ := tx.Query(ctx, `SELECT DISTINCT kind, version FROM log_leaves WHERE site = $1`, site)
	kinds, err := pgx.CollectRows(rows, pgx.RowToStructByName[kindVersion])
	if err != nil {
		return 0, nil, err
	}
	if n, claimed, ok, err := splitLeaves(ctx, pool, tx, site, kinds, emit); ok || err != nil {
		return n, claimed, err
	}
	streams := make([]*leafStream, 0, len(kinds))
	for i, kv := range kinds {
		// The cursor's name fixes its columns: the driver caches a FETCH's
		// result shape by its text, so one name never serves two shapes.
		st := &leafStream{name: fmt.Sprintf("etchlog_leaves_%s_%d", identifier(kv.Kind), kv.Version)}
		if !identifierOK(kv.Kind) {
			st.name = fmt.Sprintf("etchlog_leaves_unknown_%d", i)
		}
		st.k, err = leafKind(kv.Kind, kv.Version)
		st.known = err == nil
		q := `SELECT lg.leaf_index, lg.kind, lg.version, lg.record_id, lg.revision, lg.leaf_hash,
			lg.actor, lg.action, lg.reason, lg.at`
		versions := 0
		for _, o := range kinds {
			if o.Kind == kv.Kind {
				versions++
			}
		}
		switch {
		case st.known && versions == 1: // the table's rows are all this version's
			if st.rows, err = newRowWindow(ctx, tx, st.k, site, st.name+"_rows"); err != nil {
				return 0, nil, err
			}
			q += ", true FROM log_leaves lg"
		case st.known:
			cols := make([]string, len(st.k.Columns))
			for j, c := range st.k.Columns {
				cols[j] = "r." + c
			}
			q += ", r.id IS NOT NULL, " + strings.Join(cols, ", ") + " FROM log_leaves lg LEFT JOIN " + st.k.Table +
				" r ON r.site = lg.site AND r.id = lg.record_id AND " + st.k.revisionExpr("r") + " = lg.revision"
		default:
			q += ", false FROM log_leaves lg"
		}
		q += " WHERE lg.site = " + quoteLiteral(site) + " AND lg.kind = " + quoteLiteral(kv.Kind) +
			fmt.Sprintf(" AND lg.version = %d ORDER BY lg.leaf_index", kv.Version)
		if _, err := tx.Exec(ctx, "DECLARE "+st.name+" NO SCROLL CURSOR FOR "+q); err != nil {
			return 0, nil, err
		}
		streams = append(streams, st)
	}

	rctx, stop := context.WithCancel(ctx)
	defer stop()
	batches := make(chan []leafOut, 2)
	var (
		rerr    error
		claimed map[string]*unclaimed
	)
	go func() {
		defer close(batches)
		if rerr = mergeLeaves(rctx, tx, streams, batches); rerr == nil {
			windows := make([]*rowWindow, len(streams))
			for i, st := range streams {
				windows[i] = st.rows
			}
			claimed, rerr = unclaimedRows(rctx, tx, windows)
		}
	}()
	n, werr := writeLeaves(batches, emit, stop)
	if werr != nil {
		return n, nil, werr
	}
	return n, claimed, rerr
}

// writeLeaves encodes and emits the leaves of each batch until batches is
// closed. On an error it calls stop and drains batches.
func writeLeaves(batches <-chan []leafOut, emit func(string, any) error, stop func()) (int64, error) {
	tm := pgtype.NewMap() // the reader's connection is busy: decode with a map of our own
	var n int64
	var werr error
	for b := range batches {
		for i := range b {
			if werr != nil {
				break
			}
			o := &b[i]
			if o.fds != nil {
				f, err := factFromRaw(o.k, o.fds, o.raw, tm)
				if err != nil {
					werr = err
					break
				}
				o.l.Fields = f.Fields
			}
			if werr = emit(logfmt.LineLeaf, o.l); werr == nil {
				n++
			}
		}
		if werr != nil {
			stop() // the reader stops at its next batch; the loop drains what it sent
		}
	}
	return n, werr
}

// mergeLeaves reads the streams' leaves and sends them in index order, in
// batches, until every stream is done.
func mergeLeaves(ctx context.Context, tx pgx.Tx, streams []*leafStream, out chan<- []leafOut) error {
	b := leafBatcher{out: out}
	for {
		var next *leafStream
		for _, st := range streams {
			if len(st.buf) == 0 && !st.done {
				if err := st.fill(ctx, tx); err != nil {
					return err
				}
			}
			if len(st.buf) > 0 && (next == nil || st.buf[0].l.Index < next.buf[0].l.Index) {
				next = st
			}
		}
		if next == nil {
			return b.flush(ctx)
		}
		o := next.buf[0]
		next.buf[0] = leafOut{}
		next.buf = next.buf[1:]
		if err := b.add(ctx, o); err != nil {
			return err
		}
	}
}

// fill fetches the stream's next leaves with their rows' raw values.
func (st *leafStream) fill(ctx context.Context, tx pgx.Tx) error {
	rows, err := tx.Query(ctx, fmt.Sprintf("FETCH %d FROM %s", leafFetch, st.name))
	if err != nil {
		return err
	}
	defer rows.Close()
	if cap(st.buf) < leafFetch {
		st.buf = make([]leafOut, 0, leafFetch)
	}
	st.buf = st.buf[:0]
	for rows.Next() {
		l, err := leafOfRow(rows)
		if err != nil {
			return err
		}
		raw := rows.RawValues()
		o := leafOut{l: l, k: st.k}
		switch {
		case !st.known:
			o.l.Missing = "this etchlog does not know the fact kind " + l.Kind
		case st.rows != nil: // read below, once this FETCH is done
		case len(raw[10]) != 1 || raw[10][0] == 0:
			o.l.Missing = "no such row at the site"
		default:
			if st.fds == nil {
				st.fds = slices.Clone(rows.FieldDescriptions()[11:])
			}
			o.fds, o.raw = st.fds, cloneRow(raw[11:])
		}
		st.buf = append(st.buf, o)
	}
	if err := rows.Err(); err != nil {
		return err
	}
	rows.Close()
	st.done = len(st.buf) == 0
	if st.rows != nil {
		for i := range st.buf {
			o := &st.buf[i]
			id, err := uuid.Parse(o.l.RecordID)
			if err != nil {
				return err
			}
			if o.raw, err = st.rows.row(ctx, tx, id, o.l.Revision); err != nil {
				return err
			}
			if o.raw == nil {
				o.l.Missing = "no such row at the site"
			} else {
				o.fds = st.rows.fds
			}
		}
	}
	return nil
}

// cloneRow copies a row's raw values (valid only until the next row is
// read) into one allocation, keeping NULLs nil.
func cloneRow(raw [][]byte) [][]byte {
	n := 0
	for _, v := range raw {
		n += len(v)
	}
	buf := make([]byte, n)
	out := make([][]byte, len(raw))
	for i, v := range raw {
		if v != nil {
			out[i] = buf[:len(v):len(v)]
			copy(out[i], v)
			buf = buf[len(v):]
		}
	}
	return out
}

// leafOfRow is the leaf of the current row of a leaf query (its columns
// leaf_index, kind, version, record_id, revision, leaf_hash, actor, action,
// reason, at first): from its raw values, or through the driver's decoding
// when leafOfRaw cannot read them.
func leafOfRow(rows pgx.Rows) (logfmt.ExportLeaf, error) {
	if l, ok := leafOfRaw(rows.FieldDescriptions(), rows.RawValues()); ok {
		return l, nil
	}
	vals, err := rows.Values()
	if err != nil {
		return logfmt.ExportLeaf{}, err
	}
	return logfmt.ExportLeaf{Index: uint64(vals[0].(int64)), Kind: vals[1].(string), Version: int(vals[2].(int32)),
		RecordID: uuid.UUID(vals[3].([16]byte)).String(), Revision: int(vals[4].(int32)), LeafHash: vals[5].([]byte),
		Actor: vals[6].(string), Action: vals[7].(string), Reason: vals[8].(string),
		At: vals[9].(time.Time).UTC().Format("2006-01-02T15:04:05.000000Z")}, nil
}

// leafBatcher gathers leaves into batches of leafBatch for a channel.
type leafBatcher struct {
	out   chan<- []leafOut
	batch []leafOut
}

// add appends o, sending the batch once it is full.
func (b *leafBatcher) add(ctx context.Context, o leafOut) error {
	if b.batch == nil {
		b.batch = make([]leafOut, 0, leafBatch)
	}
	b.batch = append(b.batch, o)
	if len(b.batch) < leafBatch {
		return nil
	}
	return b.flush(ctx)
}

// flush sends what is gathered (nothing when empty).
func (b *leafBatcher) flush(ctx context.Context) error {
	if len(b.batch) == 0 {
		return nil
	}
	select {
	case b.out <- b.batch:
		b.batch = nil
		return nil
	case <-ctx.Done():
		return ctx.Err()
	}
}

// leafOfRaw reads a leaf's listing (the first ten columns of a leafStream
// row) from PostgreSQL's binary format, or reports false.
func leafOfRaw(fds []pgconn.FieldDescription, raw [][]byte) (logfmt.ExportLeaf, bool) {
	for i := range 11 {
		text := fds[i].DataTypeOID == pgtype.TextOID // the same bytes in either format; pgx asks for text
		if !text && fds[i].Format != pgtype.BinaryFormatCode || raw[i] == nil {
			return logfmt.ExportLeaf{}, false
		}
	}
	if len(raw[0]) != 8 || len(raw[2]) != 4 || len(raw[3]) != 16 || len(raw[4]) != 4 || len(raw[9]) != 8 {
		return logfmt.ExportLeaf{}, false
	}
	us := int64(binary.BigEndian.Uint64(raw[9]))
	if us == math.MaxInt64 || us == math.MinInt64 {
		return logfmt.ExportLeaf{}, false
	}
	// The texts go into one string (one allocation a leaf, not six).
	var buf [512]byte
	b := append(buf[:0], raw[1]...)
	b = appendUUID(b, raw[3])
	b = append(append(append(b, raw[6]...), raw[7]...), raw[8]...)
	b = appendRawTime(b, us)
	all := string(b)
	cut := func(n int) string { s := all[:n]; all = all[n:]; return s }
	l := logfmt.ExportLeaf{Index: binary.BigEndian.Uint64(raw[0]), Kind: cut(len(raw[1])),
		Version: int(int32(binary.BigEndian.Uint32(raw[2]))), RecordID: cut(36),
		Revision: int(int32(binary.BigEndian.Uint32(raw[4]))), LeafHash: bytes.Clone(raw[5])}
	l.Actor, l.Action, l.Reason = cut(len(raw[6])), cut(len(raw[7])), cut(len(raw[8]))
	l.At = all
	return l, true
}

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
			AND NOT EXISTS (SELECT 1 FROM log_leaves lg WHERE lg.site = $1 AND lg.record_id = r.id AND lg.revision = `+rev+` AND lg.kind = $2)
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
