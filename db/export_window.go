package db

import (
	"context"
	"encoding/binary"
	"fmt"
	"slices"
	"strings"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// A kind's leaves must carry their rows in log order. Joining each leaf to
// its row reads the record table through its key, one random page per leaf:
// for a million coupons that join cost the export more than copying both
// tables out. Rows are stored close to the order their leaves are given
// (a row and its pending leaf are written in one transaction, moments before
// the sequencer orders the leaf), so rowWindow reads the table once in
// storage order beside the leaves and keeps the rows read ahead of their
// leaf, at most windowRows of them. A row out of that reach is read by its
// key instead and dropped when the storage-order read passes it; memory
// stays bounded whatever the order.

// windowRows bounds the rows held ahead of their leaves (and the rows read by key).
const windowRows = 20000

// rowFetch is how many rows one read of the storage-order read takes.
const rowFetch = 5000

// arenaSize is the size of the allocations the queue's rows are packed into.
const arenaSize = 256 << 10

type rowKey struct {
	id  [16]byte
	rev int32
}

// queuedRow is a row read in storage order, packed, not yet claimed.
type queuedRow struct {
	key rowKey
	row []byte
}

// rowWindow reads one kind's rows in storage order for its leaves. The rows
// read wait in queue in the order read; a leaf whose row is at the queue's
// head takes it from there, and the rows a leaf passes over on its way to
// its own are kept in ahead by key, each in an allocation of its own. The
// rows of one read share one allocation while they stay in the queue, so
// rows that come in their leaves' order cost no allocation or map entry
// each.
type rowWindow struct {
	k      LeafKind
	site   string
	name   string  // the cursor (one-connection read)
	p      *portal // the storage-order read when it has a connection of its own
	fds    []pgconn.FieldDescription
	fw     *factWriter       // writes the rows' fields (set with fds)
	queue  []queuedRow       // rows read, in storage order, from head on
	arena  []byte            // where the queue's last rows are packed
	head   int               // the queue's first row not yet claimed
	ahead  map[rowKey][]byte // rows passed over before their leaf came
	byKey  map[rowKey]bool   // rows read by key, not yet passed
	ended  bool
	over   bool // a bound was reached: the rows no leaf claimed are not known
	lookup string
}

// held is how many rows the window holds ahead of their leaves.
func (w *rowWindow) held() int { return len(w.ahead) + len(w.queue) - w.head }

// newRowWindow opens the storage-order read of k's table at the site: a
// cursor named name on the export's one connection, or, when pc is set, a
// portal of that name on pc, whose next part is asked for ahead.
func newRowWindow(ctx context.Context, tx pgx.Tx, k LeafKind, site, name string, pc *portalConn) (*rowWindow, error) {
	cols := make([]string, len(k.Columns))
	for j, c := range k.Columns {
		cols[j] = "r." + c
	}
	q := "SELECT r.id AS etchlog_row_id, " + k.revisionExpr("r") + "::integer AS etchlog_row_revision, " +
		strings.Join(cols, ", ") + " FROM " + k.Table + " r WHERE r.site = " + quoteLiteral(site)
	w := &rowWindow{k: k, site: site, name: name, ahead: map[rowKey][]byte{}, byKey: map[rowKey]bool{},
		lookup: "SELECT " + strings.Join(cols, ", ") + " FROM " + k.Table + " r WHERE r.site = $1 AND r.id = $2 AND " +
			k.revisionExpr("r") + " = $3"}
	var err error
	if pc != nil {
		w.p, err = pc.open(ctx, name, q, func(raw [][]byte) error { return w.take(w.p.fds, raw, true, nil) })
	} else {
		_, err = tx.Exec(ctx, "DECLARE "+name+" NO SCROLL CURSOR FOR "+q)
	}
	if err != nil {
		return nil, err
	}
	return w, nil
}

// read fetches the next rows in storage order into the queue, or, when
// keep is false, only their keys into seen (rows read by key are dropped
// either way).
func (w *rowWindow) read(ctx context.Context, tx pgx.Tx, keep bool, seen func(rowKey)) error {
	if w.head == len(w.queue) {
		clear(w.queue)
		w.queue, w.head = w.queue[:0], 0
	}
	if w.p != nil {
		got, err := w.p.fetch(ctx, rowFetch, func(raw [][]byte) error { return w.take(w.p.fds, raw, keep, seen) }, keep)
		w.ended = got == 0
		return err
	}
	rows, err := tx.Query(ctx, fmt.Sprintf("FETCH %d FROM %s", rowFetch, w.name))
	if err != nil {
		return err
	}
	defer rows.Close()
	got := 0
	for rows.Next() {
		got++
		if err := w.take(rows.FieldDescriptions(), rows.RawValues(), keep, seen); err != nil {
			return err
		}
	}
	w.ended = got == 0
	return rows.Err()
}

// take takes one row of the storage-order read: queued, or, when keep is
// false, its key given to seen; a row read by key is dropped.
func (w *rowWindow) take(fds []pgconn.FieldDescription, raw [][]byte, keep bool, seen func(rowKey)) error {
	if w.fds == nil {
		w.setFields(fds[2:])
	}
	if len(raw[0]) != 16 || len(raw[1]) != 4 {
		return fmt.Errorf("%s row: unexpected key encoding", w.k.Table)
	}
	key := rowKey{[16]byte(raw[0]), int32(binary.BigEndian.Uint32(raw[1]))}
	if w.byKey[key] {
		delete(w.byKey, key)
		return nil
	}
	if !keep {
		seen(key)
		return nil
	}
	need := 4 * (len(raw) - 2)
	for _, v := range raw[2:] {
		need += len(v)
	}
	if cap(w.arena)-len(w.arena) < need {
		w.arena = make([]byte, 0, max(arenaSize, need)) // the queued rows keep the last one
	}
	start := len(w.arena)
	w.arena = packRow(w.arena, raw[2:])
	w.queue = append(w.queue, queuedRow{key, w.arena[start:len(w.arena):len(w.arena)]})
	return nil
}

// settle makes the window's connection free for another statement (see
// portalConn.settle).
func (w *rowWindow) settle(ctx context.Context) error {
	if w.p == nil {
		return nil
	}
	return w.p.c.settle(ctx)
}

// setFields notes the columns of the rows read.
func (w *rowWindow) setFields(fds []pgconn.FieldDescription) {
	w.fds = slices.Clone(fds)
	w.fw = newFactWriter(w.k, w.fds)
}

// attach gives the leaf o its row, or marks it missing.
func (w *rowWindow) attach(ctx context.Context, tx pgx.Tx, o *leafOut) error {
	row, err := w.row(ctx, tx, o.id, o.rev)
	switch {
	case err != nil:
		return err
	case row == nil:
		o.missing = missingRow
	default:
		o.row, o.fw = row, w.fw
	}
	return nil
}

// row returns the raw values of the leaf's row, packed (nil when the site
// has no such row); w.fds describes them.
func (w *rowWindow) row(ctx context.Context, tx pgx.Tx, id [16]byte, rev int) ([]byte, error) {
	key := rowKey{id, int32(rev)}
	if raw, ok := w.ahead[key]; ok {
		delete(w.ahead, key)
		return raw, nil
	}
	for {
		for w.head < len(w.queue) {
			q := w.queue[w.head]
			w.queue[w.head] = queuedRow{}
			w.head++
			if q.key == key {
				return q.row, nil
			}
			w.ahead[q.key] = slices.Clone(q.row) // its leaf comes later: let the read's allocation go
		}
		if w.ended || w.held() >= windowRows || len(w.byKey) >= windowRows {
			break
		}
		if err := w.read(ctx, tx, true, nil); err != nil {
			return nil, err
		}
	}
	w.over = w.over || !w.ended
	if err := w.settle(ctx); err != nil {
		return nil, err
	}
	rows, err := tx.Query(ctx, w.lookup, w.site, id, rev)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	if !rows.Next() {
		return nil, rows.Err()
	}
	if w.fds == nil {
		w.setFields(rows.FieldDescriptions())
	}
	raw := packedRow(rows.RawValues())
	if !w.ended && len(w.byKey) < windowRows {
		w.byKey[key] = true // the storage-order read drops it when it passes
	}
	return raw, rows.Err()
}

// unclaimed holds the rows of one kind that no leaf claimed: every row of
// the kind's table at the site with no leaf is among them.
type unclaimed struct {
	k    LeafKind
	ids  []uuid.UUID
	revs []int32
}

// unclaimedRows finishes the windows once every leaf is read: the rows left
// ahead and the rows the storage-order read has not reached yet are the
// ones no leaf claimed. A window that overflowed (a row read by key that the
// read may not have passed, or more unclaimed rows than it holds) gives no
// answer; its kind's rows are then checked against the log in one query.
func unclaimedRows(ctx context.Context, tx pgx.Tx, windows []*rowWindow) (map[string]*unclaimed, error) {
	out := map[string]*unclaimed{}
	for _, w := range windows {
		if w == nil || w.over {
			continue
		}
		if err := w.settle(ctx); err != nil { // a part asked ahead joins the queue
			return nil, err
		}
		u := &unclaimed{k: w.k}
		add := func(key rowKey) {
			if len(u.ids) <= windowRows {
				u.ids, u.revs = append(u.ids, key.id), append(u.revs, key.rev)
			}
		}
		for key := range w.ahead {
			add(key)
		}
		for _, q := range w.queue[w.head:] {
			add(q.key)
		}
		w.ahead, w.queue, w.head = nil, nil, 0
		for !w.ended && len(u.ids) <= windowRows {
			if err := w.read(ctx, tx, false, add); err != nil {
				return nil, err
			}
		}
		if len(u.ids) <= windowRows && len(w.byKey) == 0 {
			out[w.k.Kind] = u
		}
	}
	return out, nil
}
