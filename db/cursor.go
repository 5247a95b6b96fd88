package db

import (
	"encoding/base64"
	"encoding/json"
	"fmt"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// Cursor is the position a list resumes from. Every list hands it out in
// one opaque form: base64url (no padding) of a small versioned JSON object.
// Log-ordered lists keep the log index of the last item returned (After);
// a list ordered by another key keeps that key's text (Key).
type Cursor struct {
	V     int    `json:"v"`
	After int64  `json:"a"`
	Key   string `json:"k,omitempty"`
}

// cursorVersion is the only cursor format handed out so far.
const cursorVersion = 1

// startCursor is the position before the first item.
var startCursor = Cursor{V: cursorVersion, After: -1}

// String is the cursor's opaque text.
func (c Cursor) String() string {
	c.V = cursorVersion
	b, _ := json.Marshal(c) // a struct of plain fields always marshals
	return base64.RawURLEncoding.EncodeToString(b)
}

// ParseCursor reads a cursor a list handed out; "" is the start.
func ParseCursor(s string) (Cursor, error) {
	if s == "" {
		return startCursor, nil
	}
	b, err := base64.RawURLEncoding.DecodeString(s)
	var c Cursor
	if err == nil {
		err = json.Unmarshal(b, &c)
	}
	if err != nil || c.V != cursorVersion || c.After < -1 {
		return Cursor{}, fmt.Errorf("cursor %q: %w", s, ErrBadCursor)
	}
	return c, nil
}

// nextCursor is the cursor after a page: after its last item, or the
// cursor it was asked with when it is empty, so a client following new
// records can always resume.
func nextCursor(asked Cursor, lastIndex int64, n int) string {
	if n == 0 {
		return asked.String()
	}
	return Cursor{After: lastIndex}.String()
}

// indexedRow hides a query's last column (the log index) from struct
// scanning and scans it into idx instead.
type indexedRow struct {
	pgx.CollectableRow
	idx *int64
}

func (r indexedRow) FieldDescriptions() []pgconn.FieldDescription {
	fd := r.CollectableRow.FieldDescriptions()
	return fd[:len(fd)-1]
}

func (r indexedRow) Scan(dest ...any) error { return r.CollectableRow.Scan(append(dest, r.idx)...) }

// collectIndexed reads rows whose last column is the log index into T and
// returns the index of the last row.
func collectIndexed[T any](rows pgx.Rows) ([]T, int64, error) {
	var last int64 = -1
	items, err := pgx.CollectRows(rows, func(row pgx.CollectableRow) (T, error) {
		return pgx.RowToStructByName[T](indexedRow{row, &last})
	})
	return items, last, err
}
