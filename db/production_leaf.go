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

// A production record's leaf commits to its row as stored. A write of many
// records does not read them back: the values it copies are the stored ones
// (every column is text, uuid, binary64 or timestamptz at microseconds, each
// stored exactly as sent), so it encodes each leaf with factFrom, the one
// function that encodes stored rows, over the table's own column
// descriptions. Verification encodes the same facts again from the rows
// (TestChunkLeavesOnePerRecord, and the tampering fixture's production batch).

// productionShape caches the column descriptions of a production record
// leaf's columns, as the database describes them.
var productionShape struct {
	sync.Mutex
	fds []pgconn.FieldDescription
}

// productionFields returns the column descriptions of kind k's columns of production_records.
func productionFields(ctx context.Context, q querier, k LeafKind) ([]pgconn.FieldDescription, error) {
	productionShape.Lock()
	defer productionShape.Unlock()
	if len(productionShape.fds) == len(k.Columns) {
		return productionShape.fds, nil
	}
	rows, err := q.Query(ctx, "SELECT "+strings.Join(k.Columns, ", ")+" FROM production_records LIMIT 0")
	if err != nil {
		return nil, err
	}
	fds := append([]pgconn.FieldDescription(nil), rows.FieldDescriptions()...)
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	productionShape.fds = fds
	return fds, nil
}

// productionFact encodes one production record row, its values in
// productionColumns order as copied, as a fact of kind k; at[i] is where
// the leaf's i-th column is in the row.
func productionFact(k LeafKind, fds []pgconn.FieldDescription, at []int, row []any) (logfmt.Fact, error) {
	vals := make([]any, len(fds))
	raw := make([][]byte, len(fds))
	for i := range fds {
		v := row[at[i]]
		switch x := v.(type) {
		case *float64:
			if x == nil {
				v = nil
			} else {
				v = *x
			}
		case uuid.UUID:
			v = [16]byte(x)
		}
		if v != nil {
			raw[i] = []byte{} // not NULL; factFrom reads the raw bytes of JSON columns only
		}
		vals[i] = v
	}
	return factFrom(k, fds, vals, raw)
}

// leafOrder maps each of k's columns to its place in productionColumns.
func leafOrder(k LeafKind) ([]int, error) {
	at := make([]int, len(k.Columns))
	for i, c := range k.Columns {
		at[i] = slices.Index(productionColumns, c)
		if at[i] < 0 {
			return nil, fmt.Errorf("db: production record leaf column %s is not written", c)
		}
	}
	return at, nil
}
