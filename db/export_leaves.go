package db

import (
	"context"
	"encoding/binary"
	"fmt"
	"slices"
	"strings"
	"sync"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
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
	arena []byte // the listings of buf, packed
	done  bool
	fw    *factWriter // the joined row's columns (join path)
	rows  *rowWindow  // the kind's rows, read beside the leaves; nil: joined in the cursor
}

// leafOut is one leaf on its way from the goroutine that reads the database
// to the one that encodes and writes it: its listing and the values of its
// row, as the database sent them (PostgreSQL's binary format, packed), for
// the writer to encode.
type leafOut struct {
	list    []byte             // the listing's values (listingOK), packed; nil when decoded is set
	decoded *logfmt.ExportLeaf // the listing as the driver decoded it, when it was not in that form
	index   uint64
	id      uuid.UUID
	rev     int
	missing string      // why the leaf has no fields
	w       *rowWindow  // where its row is read (split path)
	fw      *factWriter // nil: no fields (missing set)
	row     []byte      // the row's values, packed
}

// kindVersion is one (kind, version) with leaves at the site.
type kindVersion struct {
	Kind    string `db:"kind"`
	Version int    `db:"version"`
}

// leafFetch is how many leaves one FETCH of a kind's cursor takes, and
// leafBatchLen how many leaves go from the reader to the writer at a time.
const (
	leafFetch    = 5000
	leafBatchLen = 1000
)

// exportLeaves emits every leaf of the site in index order, its fact encoded
// again from the stored row as it is now. The leaves of each kind come from
// their own cursor; a merge on the index puts them back in log order, so the
// export streams in constant memory. One goroutine reads the database (the
// cursors, the rows) while the caller's encodes and emits the leaves it has
// read, so neither waits for the other. It returns, for each kind whose rows
// were read beside its leaves without overflowing the window, the rows that
// no leaf claimed (every row with no leaf is among them; see unlogged).
func exportLeaves(ctx context.Context, pool *pgxpool.Pool, tx pgx.Tx, site string, sink exportSink) (int64, map[string]*unclaimed, error) {
	rows, _ := tx.Query(ctx, `SELECT DISTINCT kind, version FROM log_leaves WHERE site = $1`, site)
	kinds, err := pgx.CollectRows(rows, pgx.RowToStructByName[kindVersion])
	if err != nil {
		return 0, nil, err
	}
	if n, claimed, ok, err := splitLeaves(ctx, pool, tx, site, kinds, sink); ok || err != nil {
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
		q := "SELECT " + strings.ReplaceAll(", "+listingColumns, ", ", ", lg.")[2:]
		versions := 0
		for _, o := range kinds {
			if o.Kind == kv.Kind {
				versions++
			}
		}
		switch {
		case st.known && versions == 1: // the table's rows are all this version's
			if st.rows, err = newRowWindow(ctx, tx, st.k, site, st.name+"_rows", nil); err != nil {
				return 0, nil, err
			}
			q += ", true FROM log_leaves lg"
		case st.known:
			st.name += "_joined" // another shape than the same kind's cursor without its rows
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
	batches := make(chan *leafBatch, 2)
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
	n, werr := writeLeaves(batches, sink, stop)
	if werr != nil {
		return n, nil, werr
	}
	return n, claimed, rerr
}

// writeLeaves encodes and emits the leaves of each batch until batches is
// closed. On an error it calls stop and drains batches.
func writeLeaves(batches <-chan *leafBatch, sink exportSink, stop func()) (int64, error) {
	lw := leafWriter{tm: pgtype.NewMap()} // the reader's connection is busy: decode with a map of our own
	var n int64
	var werr error
	for b := range batches {
		for i := range b.leaves {
			if werr != nil {
				break
			}
			if werr = lw.write(sink, &b.leaves[i]); werr == nil {
				n++
			}
		}
		if werr != nil {
			stop() // the reader stops at its next batch; the loop drains what it sent
		}
		b.recycle()
	}
	return n, werr
}

// leafWriter writes leaves, keeping its buffers from one to the next.
type leafWriter struct {
	tm        *pgtype.Map
	list, row [][]byte
}

// write emits one leaf: straight into sink.out when set, else as the
// logfmt.ExportLeaf decoded from the same bytes.
func (lw *leafWriter) write(sink exportSink, o *leafOut) error {
	if o.fw != nil {
		lw.row = unpackRow(lw.row, o.row)
	}
	if out := sink.out; out != nil && o.decoded == nil {
		lw.list = unpackRow(lw.list, o.list)
		b, err := appendListedLeaf(out.begin(logfmt.LineLeaf), lw.list, o.missing, func(b []byte) ([]byte, error) {
			return o.fw.appendFields(b, lw.row, lw.tm)
		})
		if err != nil {
			out.drop(b)
			return err
		}
		return out.end(b)
	}
	var l logfmt.ExportLeaf
	if o.decoded != nil {
		l = *o.decoded
	} else {
		l = leafOfListing(unpackRow(lw.list, o.list))
	}
	l.Missing = o.missing
	if o.fw != nil {
		f, err := factFromRaw(o.fw.k, o.fw.fds, lw.row, lw.tm)
		if err != nil {
			return err
		}
		l.Fields = f.Fields
	}
	return sink.emit(logfmt.LineLeaf, l)
}

// mergeLeaves reads the streams' leaves and sends them in index order, in
// batches, until every stream is done.
func mergeLeaves(ctx context.Context, tx pgx.Tx, streams []*leafStream, out chan<- *leafBatch) error {
	b := leafBatcher{out: out}
	for {
		var next *leafStream
		for _, st := range streams {
			if len(st.buf) == 0 && !st.done {
				if err := st.fill(ctx, tx); err != nil {
					return err
				}
			}
			if len(st.buf) > 0 && (next == nil || st.buf[0].index < next.buf[0].index) {
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
	st.buf, st.arena = st.buf[:0], st.arena[:0] // every leaf of the last FETCH went into a batch
	for rows.Next() {
		var o leafOut
		if st.arena, err = listLeaf(rows, st.arena, &o); err != nil {
			return err
		}
		raw := rows.RawValues()
		switch {
		case !st.known:
			o.missing = unknownKind + string(raw[1]) // text: the same bytes in either format
		case st.rows != nil: // read below, once this FETCH is done
		case len(raw[10]) != 1 || raw[10][0] == 0:
			o.missing = missingRow
		default:
			if st.fw == nil {
				st.fw = newFactWriter(st.k, slices.Clone(rows.FieldDescriptions()[11:]))
			}
			o.fw, o.row = st.fw, packedRow(raw[11:])
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
			if err := st.rows.attach(ctx, tx, &st.buf[i]); err != nil {
				return err
			}
		}
	}
	return nil
}

// listLeaf reads the listing of the current row of a leaf query (its
// columns listingColumns, then a boolean, first) into o: packed onto arena
// from its raw values, or decoded by the driver when they are not in the
// form listingOK takes.
func listLeaf(rows pgx.Rows, arena []byte, o *leafOut) ([]byte, error) {
	raw := rows.RawValues()
	if listingOK(rows.FieldDescriptions(), raw) {
		start := len(arena)
		arena = packRow(arena, raw[:10])
		o.list = arena[start:]
		o.index = binary.BigEndian.Uint64(raw[0])
		o.id, o.rev = uuid.UUID(raw[3]), int(int32(binary.BigEndian.Uint32(raw[4])))
		return arena, nil
	}
	vals, err := rows.Values()
	if err != nil {
		return arena, err
	}
	t, ok := vals[9].(time.Time)
	if !ok {
		return arena, fmt.Errorf("leaf %v: its time %v is not finite", vals[0], vals[9])
	}
	l := logfmt.ExportLeaf{Index: uint64(vals[0].(int64)), Kind: vals[1].(string), Version: int(vals[2].(int32)),
		RecordID: uuid.UUID(vals[3].([16]byte)).String(), Revision: int(vals[4].(int32)), LeafHash: vals[5].([]byte),
		Actor: vals[6].(string), Action: vals[7].(string), Reason: vals[8].(string),
		At: t.UTC().Format("2006-01-02T15:04:05.000000Z")}
	o.decoded, o.index, o.id, o.rev = &l, l.Index, uuid.UUID(vals[3].([16]byte)), l.Revision
	return arena, nil
}

// leafBatch is leaves on their way to the writer, with their listings.
type leafBatch struct {
	leaves []leafOut
	arena  []byte
}

// leafBatches keeps batches the writer is done with for the next.
var leafBatches = sync.Pool{New: func() any {
	return &leafBatch{leaves: make([]leafOut, 0, leafBatchLen), arena: make([]byte, 0, leafBatchLen*192)}
}}

// recycle gives the batch back for another.
func (b *leafBatch) recycle() {
	clear(b.leaves)
	b.leaves, b.arena = b.leaves[:0], b.arena[:0]
	leafBatches.Put(b)
}

// leafBatcher gathers leaves into batches of leafBatchLen for a channel.
type leafBatcher struct {
	out   chan<- *leafBatch
	batch *leafBatch
}

// add appends o, its listing copied into the batch, sending the batch once
// it is full.
func (b *leafBatcher) add(ctx context.Context, o leafOut) error {
	if b.batch == nil {
		b.batch = leafBatches.Get().(*leafBatch)
	}
	if o.list != nil {
		start := len(b.batch.arena)
		b.batch.arena = append(b.batch.arena, o.list...)
		o.list = b.batch.arena[start:]
	}
	b.batch.leaves = append(b.batch.leaves, o)
	if len(b.batch.leaves) < leafBatchLen {
		return nil
	}
	return b.flush(ctx)
}

// flush sends what is gathered (nothing when empty).
func (b *leafBatcher) flush(ctx context.Context) error {
	if b.batch == nil || len(b.batch.leaves) == 0 {
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
