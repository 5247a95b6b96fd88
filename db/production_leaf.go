package db

import (
	"context"
	"fmt"
	"slices"

	"github.com/jackc/pgx/v5/pgconn"

	"etchlog/db/logfmt"
)

// A production record's leaf commits to its row as stored. A write of many
// records does not read them back: the values it copies are the stored ones
// (every column is text, uuid, binary64 or timestamptz at microseconds, each
// stored exactly as sent), so it encodes each leaf from them with valueFact
// (leaf_values.go) over the table's own column descriptions. Verification
// encodes the same facts again from the rows (TestChunkLeavesOnePerRecord,
// and the tampering fixture's production batch).

// productionFields returns the column descriptions of kind k's columns of production_records.
func productionFields(ctx context.Context, q querier, k LeafKind) ([]pgconn.FieldDescription, error) {
	return leafFields(ctx, q, k, "production_records")
}

// productionFact encodes one production record row, its values in
// productionColumns order as copied, as a fact of kind k; at[i] is where
// the leaf's i-th column is in the row.
func productionFact(k LeafKind, fds []pgconn.FieldDescription, at []int, row []any) (logfmt.Fact, error) {
	vals := make([]any, len(fds))
	for i := range fds {
		vals[i] = row[at[i]]
	}
	return valueFact(k, fds, vals)
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
