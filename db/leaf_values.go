package db

import (
	"context"
	"fmt"
	"slices"
	"strings"
	"sync"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"etchlog/db/logfmt"
)

// A leaf commits to its row as stored. A write whose every column is text,
// uuid, integer, boolean, binary64, date or timestamptz at microseconds
// (each stored exactly as sent) need not read its row back to encode the
// leaf: valueFact encodes the values it sends with factFrom, the one
// function that encodes stored rows, over the table's own column
// descriptions, so the pending leaf can leave with the row's INSERT.
// Verification encodes the same facts again from the rows (the tampering
// scenarios, TestLeafFromValuesMatchesRow).

// leafShapes caches, per leaf kind and table, the column descriptions of
// the kind's columns as the database describes them.
var leafShapes sync.Map // leafShapeKey → []pgconn.FieldDescription

type leafShapeKey struct {
	kind    string
	version int
	table   string
}

// leafFields returns the column descriptions of kind k's columns of table.
func leafFields(ctx context.Context, q querier, k LeafKind, table string) ([]pgconn.FieldDescription, error) {
	key := leafShapeKey{k.Kind, k.Version, table}
	if fds, ok := leafShapes.Load(key); ok {
		return fds.([]pgconn.FieldDescription), nil
	}
	fds, err := describeColumns(ctx, q, table, k.Columns)
	if err != nil {
		return nil, err
	}
	leafShapes.Store(key, fds)
	return fds, nil
}

// describeColumns asks the database for the descriptions of table's columns
// cols, in their order, without reading a row.
func describeColumns(ctx context.Context, q querier, table string, cols []string) ([]pgconn.FieldDescription, error) {
	rows, err := q.Query(ctx, "SELECT "+strings.Join(cols, ", ")+" FROM "+table+" LIMIT 0")
	if err != nil {
		return nil, err
	}
	fds := slices.Clone(rows.FieldDescriptions())
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	if len(fds) != len(cols) {
		return nil, fmt.Errorf("db: %s: %d column descriptions for %d columns", table, len(fds), len(cols))
	}
	return fds, nil
}

// valueFact encodes the values about to be stored in the columns fds
// describe (vals[i] in fds[i]) as a fact of kind k, as factFrom encodes the
// row read back. A value is taken only where its Go type is stored exactly
// as sent in its column's type; any other refuses, so a leaf is never
// encoded from a value the database could store differently.
func valueFact(k LeafKind, fds []pgconn.FieldDescription, vals []any) (logfmt.Fact, error) {
	if len(vals) != len(fds) {
		return logfmt.Fact{}, fmt.Errorf("db: %s: %d values for %d columns", k.Kind, len(vals), len(fds))
	}
	dec := make([]any, len(fds))
	raw := make([][]byte, len(fds))
	for i, fd := range fds {
		v, err := storedForm(fd.DataTypeOID, vals[i])
		if err != nil {
			return logfmt.Fact{}, fmt.Errorf("db: %s.%s: %w", k.Kind, fd.Name, err)
		}
		if v != nil {
			raw[i] = []byte{} // not NULL; factFrom reads the raw bytes of JSON columns only
		}
		dec[i] = v
	}
	return factFrom(k, fds, dec, raw)
}

// storedForm is v as pgx decodes it from a column of type oid after storing
// it there (nil for NULL), for the types stored exactly as sent.
func storedForm(oid uint32, v any) (any, error) {
	switch x := v.(type) {
	case nil:
		return nil, nil
	case *float64:
		if x == nil {
			return nil, nil
		}
		return storedForm(oid, *x)
	case *string:
		if x == nil {
			return nil, nil
		}
		return storedForm(oid, *x)
	case *uuid.UUID:
		if x == nil {
			return nil, nil
		}
		return storedForm(oid, *x)
	case float64:
		if oid == pgtype.Float8OID {
			return x, nil
		}
	case string:
		if oid == pgtype.TextOID {
			return x, nil
		}
	case bool:
		if oid == pgtype.BoolOID {
			return x, nil
		}
	case int:
		if oid == pgtype.Int4OID && int(int32(x)) == x {
			return int32(x), nil
		}
		if oid == pgtype.Int8OID {
			return int64(x), nil
		}
	case uuid.UUID:
		if oid == pgtype.UUIDOID {
			return [16]byte(x), nil
		}
	case Date:
		if oid == pgtype.DateOID {
			return DateOf(x.Time).Time, nil // pgx sends the day of the time's own calendar
		}
	case time.Time:
		if oid == pgtype.TimestamptzOID && x.Equal(x.Truncate(time.Microsecond)) {
			return x, nil
		}
	}
	return nil, fmt.Errorf("a %T is not stored exactly as sent in a column of type %d; log it from the stored row", v, oid)
}

// A write of many rows (a chunk of production records, the coupons and
// sections of an import) copies them in the binary COPY format and encodes
// each row's leaf from the bytes laid out for it (rawFact): rowLeaves holds,
// for one table and the columns written, the leaf's column descriptions and
// every written column's type (what encodeCopyRows sends it as).
// Verification encodes the same facts again from the stored rows
// (TestChunkLeavesOnePerRecord, TestImportLeavesVerify, the tampering
// fixture's production batch).

// rowLeaves encodes rows laid out in a write's column order as facts of
// one leaf kind.
type rowLeaves struct {
	kind LeafKind
	fds  []pgconn.FieldDescription // the leaf's columns, in the leaf's order
	bin  []pgconn.FieldDescription // fds, as their binary values describe them (rawFact)
	at   []int                     // where the leaf's i-th column is in a row
	oids []uint32                  // the type of each written column, in row order
}

// rowShapes caches rowLeaves by kind, table and written columns.
var rowShapes sync.Map // string → *rowLeaves

// newRowLeaves describes kind k's leaves of rows written into table's cols
// (every leaf column must be written), with the column types the database
// gives them; q is asked once per process and shape.
func newRowLeaves(ctx context.Context, q querier, k LeafKind, table string, cols []string) (*rowLeaves, error) {
	key := fmt.Sprintf("%s/%d\x00%s\x00%s", k.Kind, k.Version, table, strings.Join(cols, ","))
	if v, ok := rowShapes.Load(key); ok {
		return v.(*rowLeaves), nil
	}
	r := &rowLeaves{kind: k, at: make([]int, len(k.Columns)), oids: make([]uint32, len(cols))}
	for i, c := range k.Columns {
		if r.at[i] = slices.Index(cols, c); r.at[i] < 0 {
			return nil, fmt.Errorf("db: %s leaf column %s is not written", k.Kind, c)
		}
	}
	all, err := describeColumns(ctx, q, table, cols)
	if err != nil {
		return nil, err
	}
	for i, fd := range all {
		r.oids[i] = fd.DataTypeOID
	}
	r.fds = make([]pgconn.FieldDescription, len(r.at))
	for i, j := range r.at {
		r.fds[i] = all[j]
	}
	r.bin = slices.Clone(r.fds)
	for i := range r.bin {
		r.bin[i].Format = pgtype.BinaryFormatCode
	}
	rowShapes.Store(key, r)
	return r, nil
}

// rawFact encodes one row from the binary values a copyWriter laid out for
// it (copyWriter.fields, in the written columns' order) as a fact of the
// kind, with factFromRaw, the encoding the export reads stored rows with:
// the leaf commits to the very bytes the COPY sends. tm decodes a type
// factFromRaw has no direct text for.
func (r *rowLeaves) rawFact(fields [][]byte, tm *pgtype.Map) (logfmt.Fact, error) {
	if len(fields) != len(r.oids) {
		return logfmt.Fact{}, fmt.Errorf("db: %s: %d values for %d columns", r.kind.Kind, len(fields), len(r.oids))
	}
	raw := make([][]byte, len(r.at))
	for i, j := range r.at {
		raw[i] = fields[j]
	}
	return factFromRaw(r.kind, r.bin, raw, tm)
}
