package db

import (
	"encoding/base64"
	"encoding/json"
	"fmt"
	"strconv"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// Every list hands out one cursor format: base64url (no padding) of a JSON
// array whose first element names the list and whose other elements are the
// keyset position of the page's last item. Clients treat it as opaque; the
// list name makes a cursor of one list refused by another instead of
// silently skipping records.

// EncodeCursor returns the cursor of list positioned after key.
func EncodeCursor(list string, key ...string) string {
	b, _ := json.Marshal(append([]string{list}, key...)) // a []string always marshals
	return base64.RawURLEncoding.EncodeToString(b)
}

// DecodeCursor returns the n key parts of a cursor that EncodeCursor made for
// list, or an error wrapping ErrBadCursor.
func DecodeCursor(s, list string, n int) ([]string, error) {
	bad := fmt.Errorf("cursor %q: %w", s, ErrBadCursor)
	b, err := base64.RawURLEncoding.DecodeString(s)
	if err != nil {
		return nil, bad
	}
	var parts []string
	if json.Unmarshal(b, &parts) != nil || len(parts) != n+1 || parts[0] != list {
		return nil, bad
	}
	return parts[1:], nil
}

// SeqCursor encodes a position in a sequence-numbered list (the audit events).
func SeqCursor(list string, seq int64) string {
	return EncodeCursor(list, strconv.FormatInt(seq, 10))
}

// AfterSeq decodes a SeqCursor of list; the empty cursor is 0, the list's start.
func AfterSeq(list, cursor string) (int64, error) {
	if cursor == "" {
		return 0, nil
	}
	parts, err := DecodeCursor(cursor, list, 1)
	if err != nil {
		return 0, err
	}
	n, err := strconv.ParseInt(parts[0], 10, 64)
	if err != nil || n < 0 {
		return 0, fmt.Errorf("cursor %q: %w", cursor, ErrBadCursor)
	}
	return n, nil
}

// Lists in log order keep, as their cursor, the log index the next page
// starts at, in the one cursor format (EncodeCursor).

// logCursor decodes a log-order cursor of list; "" is the start, index 0.
func logCursor(list, cursor string) (int64, error) { return AfterSeq(list, cursor) }

// nextLogCursor is the cursor after a page: after its last item, or the
// cursor it was asked with when the page is empty, so a client following
// new records can always resume.
func nextLogCursor(list string, from, lastIndex int64, n int) string {
	if n == 0 {
		return SeqCursor(list, from)
	}
	return SeqCursor(list, lastIndex+1)
}

// tailRow hides a query's last len(tail) columns from struct scanning and
// scans them into tail instead.
type tailRow struct {
	pgx.CollectableRow
	tail []any
}

func (r tailRow) FieldDescriptions() []pgconn.FieldDescription {
	fd := r.CollectableRow.FieldDescriptions()
	return fd[:len(fd)-len(r.tail)]
}

func (r tailRow) Scan(dest ...any) error { return r.CollectableRow.Scan(append(dest, r.tail...)...) }

// collectIndexed reads rows whose last column is the log index into T and
// returns the index of the last row.
func collectIndexed[T any](rows pgx.Rows) ([]T, int64, error) {
	return collectTail[T](rows, nil)
}
