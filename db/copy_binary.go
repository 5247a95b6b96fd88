package db

import (
	"bytes"
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"
)

// A large write lays its rows out in PostgreSQL's binary COPY format while
// it prepares them, outside its transaction, so that inside the transaction
// the rows only travel: a stream encodes chunk N+1 while chunk N is copied.
// copyRows knows the few column types those rows hold.

// copyRows is rows of one table in the binary COPY format (header, tuples,
// trailer), ready to send.
type copyRows struct {
	table string
	cols  []string
	data  []byte
	n     int
}

// pgEpochMicro is the origin of PostgreSQL's binary timestamps (pgEpoch) in Unix microseconds.
var pgEpochMicro = pgEpoch.UnixMicro()

// encodeCopyRows lays rows out for COPY ... FROM STDIN BINARY into table's
// cols; oids[i] is the type of column i (text, boolean, uuid, date,
// timestamptz, float8, int2, int4, int8, bytea),
// checked against each value's Go type (integers also against its range;
// bytea takes []byte, date a Date). A time is sent at microseconds,
// truncated, as pgx sends it; a nil pointer (*float64, *string,
// *uuid.UUID) is NULL.
func encodeCopyRows(table string, cols []string, oids []uint32, rows [][]any) (*copyRows, error) {
	w := newCopyWriter(table, cols, oids, len(rows))
	for _, row := range rows {
		if err := w.add(row); err != nil {
			return nil, err
		}
	}
	return w.done(), nil
}

// copyWriter lays rows out one at a time (encodeCopyRows), and tells where
// the fields of the row last added lie, so that a write can encode each
// row's leaf from the very bytes it copies (rowLeaves.rawFact).
type copyWriter struct {
	b     bytes.Buffer
	table string
	cols  []string
	oids  []uint32
	n     int
	ends  []int // where each field of the last row ends (-1: NULL)
	start int   // where the last row's first field starts
}

// newCopyWriter starts the rows of table's cols (of types oids), about n of them.
func newCopyWriter(table string, cols []string, oids []uint32, n int) *copyWriter {
	w := &copyWriter{table: table, cols: cols, oids: oids, ends: make([]int, len(cols))}
	w.b.Grow(n * len(cols) * 24)
	w.b.WriteString("PGCOPY\n\xff\r\n\x00")
	w.b.Write([]byte{0, 0, 0, 0, 0, 0, 0, 0}) // flags, header extension length
	return w
}

// add lays out one row, a value per column.
func (w *copyWriter) add(row []any) error {
	if len(row) != len(w.cols) {
		return fmt.Errorf("db: copy into %s: a row of %d values for %d columns", w.table, len(row), len(w.cols))
	}
	var c [2]byte
	binary.BigEndian.PutUint16(c[:], uint16(len(w.cols)))
	w.b.Write(c[:])
	w.start = w.b.Len()
	for i, v := range row {
		before := w.b.Len()
		if err := appendCopyValue(&w.b, w.oids[i], v); err != nil {
			return fmt.Errorf("db: copy into %s, column %s: %w", w.table, w.cols[i], err)
		}
		w.ends[i] = w.b.Len()
		if w.b.Len()-before == 4 && binary.BigEndian.Uint32(w.b.Bytes()[before:]) == 0xffffffff {
			w.ends[i] = -1
		}
	}
	w.n++
	return nil
}

// fields answers the binary values of the row last added, in column order
// (nil for NULL), as slices of the laid-out bytes: valid until the next add.
func (w *copyWriter) fields(dst [][]byte) [][]byte {
	dst = dst[:0]
	data, at := w.b.Bytes(), w.start
	for _, end := range w.ends {
		if end < 0 {
			dst = append(dst, nil)
			at += 4
			continue
		}
		dst = append(dst, data[at+4:end])
		at = end
	}
	return dst
}

// eachRow hands the binary values of each row laid out, in order, to fn
// (as copyWriter.fields answers them: nil for NULL, slices of the laid-out
// bytes, valid during the call).
func (c *copyRows) eachRow(fn func(fields [][]byte) error) error {
	data := c.data
	const header = 19 // signature, flags, header extension length
	if len(data) < header {
		return fmt.Errorf("db: copy into %s: no header", c.table)
	}
	at := header
	fields := make([][]byte, len(c.cols))
	for range c.n {
		if at+2 > len(data) || int(binary.BigEndian.Uint16(data[at:])) != len(c.cols) {
			return fmt.Errorf("db: copy into %s: a row that is not %d fields", c.table, len(c.cols))
		}
		at += 2
		for i := range fields {
			if at+4 > len(data) {
				return fmt.Errorf("db: copy into %s: rows cut short", c.table)
			}
			n := int32(binary.BigEndian.Uint32(data[at:]))
			at += 4
			if n < 0 {
				fields[i] = nil
				continue
			}
			if at+int(n) > len(data) {
				return fmt.Errorf("db: copy into %s: rows cut short", c.table)
			}
			fields[i] = data[at : at+int(n)]
			at += int(n)
		}
		if err := fn(fields); err != nil {
			return err
		}
	}
	return nil
}

// done ends the rows.
func (w *copyWriter) done() *copyRows {
	w.b.Write([]byte{0xff, 0xff})
	return &copyRows{table: w.table, cols: w.cols, data: w.b.Bytes(), n: w.n}
}

// appendCopyValue appends one field: its length, then its bytes.
func appendCopyValue(b *bytes.Buffer, oid uint32, v any) error {
	var w [8]byte
	field := func(p []byte) {
		binary.BigEndian.PutUint32(w[:4], uint32(len(p)))
		b.Write(w[:4])
		b.Write(p)
	}
	switch x := v.(type) {
	case nil:
		b.Write([]byte{0xff, 0xff, 0xff, 0xff})
		return nil
	case *float64:
		if x == nil {
			b.Write([]byte{0xff, 0xff, 0xff, 0xff})
			return nil
		}
		v = *x
	case *string:
		if x == nil {
			b.Write([]byte{0xff, 0xff, 0xff, 0xff})
			return nil
		}
		v = *x
	case *uuid.UUID:
		if x == nil {
			b.Write([]byte{0xff, 0xff, 0xff, 0xff})
			return nil
		}
		v = *x
	}
	switch x := v.(type) {
	case string:
		if oid == pgtype.TextOID {
			binary.BigEndian.PutUint32(w[:4], uint32(len(x)))
			b.Write(w[:4])
			b.WriteString(x)
			return nil
		}
	case uuid.UUID:
		if oid == pgtype.UUIDOID {
			field(x[:])
			return nil
		}
	case [16]byte:
		if oid == pgtype.UUIDOID {
			field(x[:])
			return nil
		}
	case bool:
		if oid == pgtype.BoolOID {
			if x {
				field([]byte{1})
			} else {
				field([]byte{0})
			}
			return nil
		}
	case Date:
		if oid == pgtype.DateOID {
			// Days from 2000-01-01 to the day's midnight UTC, as pgx sends a date.
			y, m, d := x.Date()
			days := (time.Date(y, m, d, 0, 0, 0, 0, time.UTC).Unix() - pgEpoch.Unix()) / 86400
			if days < math.MinInt32+1 || days > math.MaxInt32-1 { // the ends mean infinity
				return fmt.Errorf("the day %s is out of range", x)
			}
			var p [4]byte
			binary.BigEndian.PutUint32(p[:], uint32(int32(days)))
			field(p[:])
			return nil
		}
	case []byte:
		if oid == pgtype.ByteaOID {
			field(x)
			return nil
		}
	case int:
		return appendCopyInt(b, oid, int64(x))
	case int16:
		return appendCopyInt(b, oid, int64(x))
	case int64:
		return appendCopyInt(b, oid, x)
	case float64:
		if oid == pgtype.Float8OID {
			var p [8]byte
			binary.BigEndian.PutUint64(p[:], math.Float64bits(x))
			field(p[:])
			return nil
		}
	case time.Time:
		if oid == pgtype.TimestamptzOID {
			var p [8]byte
			us := x.Unix()*1_000_000 + int64(x.Nanosecond())/1000 - pgEpochMicro
			binary.BigEndian.PutUint64(p[:], uint64(us))
			field(p[:])
			return nil
		}
	}
	return fmt.Errorf("a %T for a column of type %d", v, oid)
}

// appendCopyInt appends an integer as the column's integer type, which must hold it.
func appendCopyInt(b *bytes.Buffer, oid uint32, x int64) error {
	var w [12]byte
	switch {
	case oid == pgtype.Int2OID && x >= math.MinInt16 && x <= math.MaxInt16:
		binary.BigEndian.PutUint32(w[:4], 2)
		binary.BigEndian.PutUint16(w[4:], uint16(x))
		b.Write(w[:6])
	case oid == pgtype.Int4OID && x >= math.MinInt32 && x <= math.MaxInt32:
		binary.BigEndian.PutUint32(w[:4], 4)
		binary.BigEndian.PutUint32(w[4:], uint32(x))
		b.Write(w[:8])
	case oid == pgtype.Int8OID:
		binary.BigEndian.PutUint32(w[:4], 8)
		binary.BigEndian.PutUint64(w[4:], uint64(x))
		b.Write(w[:12])
	default:
		return fmt.Errorf("the integer %d for a column of type %d", x, oid)
	}
	return nil
}

// copyIn sends prepared rows inside the write transaction tx.
func copyIn(ctx context.Context, tx pgx.Tx, c *copyRows) error {
	if t, ok := tx.(*pipeTx); ok {
		if err := t.begun(ctx); err != nil {
			return err
		}
	}
	sql := "COPY " + pgx.Identifier{c.table}.Sanitize() + " (" + strings.Join(c.cols, ", ") + ") FROM STDIN BINARY"
	tag, err := tx.Conn().PgConn().CopyFrom(ctx, bytes.NewReader(c.data), sql)
	if err == nil && tag.RowsAffected() != int64(c.n) {
		err = fmt.Errorf("db: copy into %s: %d rows of %d", c.table, tag.RowsAffected(), c.n)
	}
	return err
}
