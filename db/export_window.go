package db

import (
	"bytes"
	"context"
	"encoding/binary"
	"fmt"
	"strings"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"etchlog/db/logfmt"
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

// rowFetch is how many rows one FETCH of the storage-order read takes.
const rowFetch = 5000

type rowKey struct {
	id  [16]byte
	rev int32
}

// rowWindow reads one kind's rows in storage order for its leaves.
type rowWindow struct {
	k      LeafKind
	site   string
	name   string // the cursor
	fds    []pgconn.FieldDescription
	ahead  map[rowKey][][]byte // rows read before their leaf
	byKey  map[rowKey]bool     // rows read by key, not yet passed
	ended  bool
	lookup string
}

// newRowWindow declares the storage-order cursor of k's table at the site.
func newRowWindow(ctx context.Context, tx pgx.Tx, k LeafKind, site, name string) (*rowWindow, error) {
	cols := make([]string, len(k.Columns))
	for j, c := range k.Columns {
		cols[j] = "r." + c
	}
	q := "SELECT r.id AS etchlog_row_id, " + k.revisionExpr("r") + "::integer AS etchlog_row_revision, " +
		strings.Join(cols, ", ") + " FROM " + k.Table + " r WHERE r.site = " + quoteLiteral(site)
	if _, err := tx.Exec(ctx, "DECLARE "+name+" NO SCROLL CURSOR FOR "+q); err != nil {
		return nil, err
	}
	return &rowWindow{k: k, site: site, name: name, ahead: map[rowKey][][]byte{}, byKey: map[rowKey]bool{},
		lookup: "SELECT " + strings.Join(cols, ", ") + " FROM " + k.Table + " r WHERE r.site = $1 AND r.id = $2 AND " +
			k.revisionExpr("r") + " = $3"}, nil
}

// read fetches the next rows in storage order into ahead.
func (w *rowWindow) read(ctx context.Context, tx pgx.Tx) error {
	rows, err := tx.Query(ctx, fmt.Sprintf("FETCH %d FROM %s", rowFetch, w.name))
	if err != nil {
		return err
	}
	defer rows.Close()
	got := 0
	for rows.Next() {
		got++
		raw := rows.RawValues()
		if w.fds == nil {
			w.fds = append([]pgconn.FieldDescription(nil), rows.FieldDescriptions()[2:]...)
		}
		if len(raw[0]) != 16 || len(raw[1]) != 4 {
			return fmt.Errorf("%s row: unexpected key encoding", w.k.Table)
		}
		key := rowKey{[16]byte(raw[0]), int32(binary.BigEndian.Uint32(raw[1]))}
		if w.byKey[key] {
			delete(w.byKey, key)
			continue
		}
		vals := make([][]byte, len(raw)-2)
		for i, v := range raw[2:] {
			if v != nil {
				vals[i] = bytes.Clone(v)
			}
		}
		w.ahead[key] = vals
	}
	w.ended = got == 0
	return rows.Err()
}

// fields returns the fact of the leaf's row (nil when the site has no such row).
func (w *rowWindow) fields(ctx context.Context, tx pgx.Tx, id [16]byte, rev int) ([]logfmt.Field, error) {
	key := rowKey{id, int32(rev)}
	for {
		if raw, ok := w.ahead[key]; ok {
			delete(w.ahead, key)
			f, err := factFromRaw(w.k, w.fds, raw, tx.Conn().TypeMap())
			return f.Fields, err
		}
		if w.ended || len(w.ahead) >= windowRows || len(w.byKey) >= windowRows {
			break
		}
		if err := w.read(ctx, tx); err != nil {
			return nil, err
		}
	}
	rows, err := tx.Query(ctx, w.lookup, w.site, id, rev)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	if !rows.Next() {
		return nil, rows.Err()
	}
	f, err := factFromRaw(w.k, rows.FieldDescriptions(), rows.RawValues(), tx.Conn().TypeMap())
	if err != nil {
		return nil, err
	}
	if !w.ended {
		w.byKey[key] = true // the storage-order read drops it when it passes
	}
	return f.Fields, rows.Err()
}
