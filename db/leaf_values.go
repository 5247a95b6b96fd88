package db

import (
	"context"
	"fmt"
	"slices"
	"strings"
	"sync"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5/pgconn"

	"etchlog/db/logfmt"
)

// A write of many rows (a chunk of production records, the coupons and
// sections of an import) does not read its rows back for their leaves. The
// values it copies are the stored ones: every column it writes is text,
// boolean, an integer, uuid, date, binary64 or timestamptz at microseconds,
// each stored exactly as sent (copy_binary.go sends them), so it encodes
// each leaf with factFrom, the one function that encodes stored rows, over
// the table's own column descriptions. Verification encodes the same facts
// again from the stored rows (TestChunkLeavesOnePerRecord,
// TestImportLeavesVerify, the tampering fixture's production batch and
// import).

// rowLeaves encodes rows laid out in a write's column order as facts of
// one leaf kind.
type rowLeaves struct {
	kind LeafKind
	fds  []pgconn.FieldDescription // the leaf's columns, in the leaf's order
	at   []int                     // where the leaf's i-th column is in a row
	oids []uint32                  // the type of each written column, in row order
}

// columnShapes caches rowLeaves by kind, table and written columns.
var columnShapes sync.Map // string → *rowLeaves

// newRowLeaves describes kind k's leaves of rows written into table's cols
// (every leaf column must be written), with the column types the database
// gives them; q is asked once per process and shape.
func newRowLeaves(ctx context.Context, q querier, k LeafKind, table string, cols []string) (*rowLeaves, error) {
	key := fmt.Sprintf("%s/%d\x00%s\x00%s", k.Kind, k.Version, table, strings.Join(cols, ","))
	if v, ok := columnShapes.Load(key); ok {
		return v.(*rowLeaves), nil
	}
	r := &rowLeaves{kind: k, at: make([]int, len(k.Columns)), oids: make([]uint32, len(cols))}
	for i, c := range k.Columns {
		if r.at[i] = slices.Index(cols, c); r.at[i] < 0 {
			return nil, fmt.Errorf("db: %s leaf column %s is not written", k.Kind, c)
		}
	}
	rows, err := q.Query(ctx, "SELECT "+strings.Join(cols, ", ")+" FROM "+table+" LIMIT 0")
	if err != nil {
		return nil, err
	}
	all := slices.Clone(rows.FieldDescriptions())
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	if len(all) != len(cols) {
		return nil, fmt.Errorf("db: %s: %d column descriptions for %d columns", table, len(all), len(cols))
	}
	for i, fd := range all {
		r.oids[i] = fd.DataTypeOID
	}
	r.fds = make([]pgconn.FieldDescription, len(r.at))
	for i, j := range r.at {
		r.fds[i] = all[j]
	}
	columnShapes.Store(key, r)
	return r, nil
}

// fact encodes one row, its values in the written columns' order as
// copied, as a fact of the kind.
func (r *rowLeaves) fact(row []any) (logfmt.Fact, error) {
	vals := make([]any, len(r.fds))
	raw := make([][]byte, len(r.fds))
	for i := range r.fds {
		v := leafValue(row[r.at[i]])
		if v != nil {
			raw[i] = []byte{} // not NULL; factFrom reads the raw bytes of JSON columns only
		}
		vals[i] = v
	}
	return factFrom(r.kind, r.fds, vals, raw)
}

// leafValue is a written value as pgx decodes the stored one (nil: NULL),
// the form canonicalText takes.
func leafValue(v any) any {
	switch x := v.(type) {
	case *float64:
		if x != nil {
			return *x
		}
		return nil
	case *string:
		if x != nil {
			return *x
		}
		return nil
	case *uuid.UUID:
		if x != nil {
			return [16]byte(*x)
		}
		return nil
	case uuid.UUID:
		return [16]byte(x)
	case Date:
		return x.Time
	}
	return v
}
