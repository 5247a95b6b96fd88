package db

import (
	"context"
	"encoding"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"time"
	"unsafe"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"etchlog/db/logfmt"
)

// An export writes every revision of every coupon in its readable form, the
// JSON encoding/json gives the record's struct. Scanning each row into the
// struct and encoding it by reflection cost several times what the database
// takes to send the row, so recordEncoder writes the same JSON straight from
// the row's raw values for the field types records use. A value it cannot
// write exactly so (NULL into a non-pointer field, NaN, an infinite or
// out-of-range date or time) makes it decline the row, which then takes the
// scan-and-encode path and fails or succeeds exactly as before;
// TestRecordEncoderMatchesEncodingJSON compares the two on stored rows.

// recordJSON is a record already encoded as encoding/json encodes it.
type recordJSON []byte

// AppendJSON appends the encoded record (ExportWriter's fast path).
func (r recordJSON) AppendJSON(b []byte) []byte { return append(b, r...) }

// MarshalJSON returns the encoded record.
func (r recordJSON) MarshalJSON() ([]byte, error) { return r, nil }

type fieldType int

const (
	ftString fieldType = iota
	ftBool
	ftInt
	ftFloat
	ftUUID
	ftTime
	ftDate
	ftZero // a field the table does not hold (db:"-"): its zero value
)

type recordField struct {
	key       string // `"name":`
	col       int
	typ       fieldType
	ptr       bool // a pointer: NULL is nil
	omitEmpty bool
	zero      string // ftZero: the zero value's encoding ("" when omitted)
}

// recordEncoder writes rows of one result as encoding/json writes T.
type recordEncoder struct{ fields []recordField }

var (
	uuidType = reflect.TypeFor[uuid.UUID]()
	timeType = reflect.TypeFor[time.Time]()
	dateType = reflect.TypeFor[Date]()
)

// newRecordEncoder returns the encoder of T's rows from a result with
// columns fds, or nil when T has a field it does not write exactly as
// encoding/json does.
func newRecordEncoder(t reflect.Type, fds []pgconn.FieldDescription) *recordEncoder {
	if implementsMarshaler(t) {
		return nil
	}
	cols := map[string]int{}
	for i, fd := range fds {
		cols[fd.Name] = i
	}
	e := &recordEncoder{}
	names := map[string]bool{}
	ok := true
	var walk func(t reflect.Type)
	walk = func(t reflect.Type) {
		for i := range t.NumField() {
			f := t.Field(i)
			jtag, hasJSON := f.Tag.Lookup("json")
			if jtag == "-" {
				continue
			}
			if f.Anonymous && !hasJSON && f.Type.Kind() == reflect.Struct {
				if implementsMarshaler(f.Type) {
					ok = false
					return
				}
				walk(f.Type)
				continue
			}
			if !f.IsExported() {
				continue
			}
			name, opts, _ := strings.Cut(jtag, ",")
			if name == "" {
				name = f.Name
			}
			if names[name] || (opts != "" && opts != "omitempty") || !validKey(name) {
				ok = false // a shadowed name or an option this does not write
				return
			}
			names[name] = true
			rf := recordField{key: strconv.Quote(name) + ":", omitEmpty: opts == "omitempty", col: -1}
			ft := f.Type
			if dbtag := f.Tag.Get("db"); dbtag == "-" {
				rf.typ = ftZero
				switch ft.Kind() {
				case reflect.String:
					rf.zero = `""`
				case reflect.Slice, reflect.Map, reflect.Pointer, reflect.Interface:
					rf.zero = "null"
				default:
					ok = false
					return
				}
				if rf.omitEmpty {
					continue // always empty: never written
				}
				e.fields = append(e.fields, rf)
				continue
			} else {
				col, found := cols[strings.Split(dbtag, ",")[0]]
				if !found {
					ok = false
					return
				}
				rf.col = col
			}
			if ft.Kind() == reflect.Pointer {
				rf.ptr, ft = true, ft.Elem()
			}
			oid := fds[rf.col].DataTypeOID
			binary := fds[rf.col].Format == pgtype.BinaryFormatCode
			switch {
			case ft == uuidType && oid == pgtype.UUIDOID && binary:
				rf.typ = ftUUID
			case ft == timeType && oid == pgtype.TimestamptzOID && binary:
				rf.typ = ftTime
			case ft == dateType && oid == pgtype.DateOID && binary:
				rf.typ = ftDate
			case implementsMarshaler(ft):
				ok = false
			case ft.Kind() == reflect.String && (oid == pgtype.TextOID || oid == pgtype.VarcharOID):
				rf.typ = ftString
			case ft.Kind() == reflect.Bool && oid == pgtype.BoolOID && binary:
				rf.typ = ftBool
			case (ft.Kind() == reflect.Int || ft.Kind() == reflect.Int64) && binary &&
				(oid == pgtype.Int2OID || oid == pgtype.Int4OID || oid == pgtype.Int8OID),
				ft.Kind() == reflect.Int32 && binary && (oid == pgtype.Int2OID || oid == pgtype.Int4OID):
				rf.typ = ftInt
			case ft.Kind() == reflect.Float64 && oid == pgtype.Float8OID && binary:
				rf.typ = ftFloat
			default:
				ok = false
			}
			if !ok {
				return
			}
			if rf.omitEmpty && !rf.ptr && (rf.typ == ftUUID || rf.typ == ftTime || rf.typ == ftDate) {
				continue // omitempty does not apply to arrays and structs: written always
			}
			e.fields = append(e.fields, rf)
		}
	}
	walk(t)
	if !ok {
		return nil
	}
	return e
}

func implementsMarshaler(t reflect.Type) bool {
	for _, t := range []reflect.Type{t, reflect.PointerTo(t)} {
		if t.Implements(reflect.TypeFor[json.Marshaler]()) || t.Implements(reflect.TypeFor[encoding.TextMarshaler]()) {
			return true
		}
	}
	return false
}

// validKey reports whether encoding/json takes name as a key unchanged.
func validKey(name string) bool {
	for _, r := range name {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '_') {
			return false
		}
	}
	return name != ""
}

// append appends the row's record, or reports false (b unchanged in
// meaning) when a value needs the scan-and-encode path.
func (e *recordEncoder) append(b []byte, raw [][]byte) ([]byte, bool) {
	b = append(b, '{')
	first := true
	for i := range e.fields {
		f := &e.fields[i]
		if f.typ == ftZero {
			if !first {
				b = append(b, ',')
			}
			b = append(append(b, f.key...), f.zero...)
			first = false
			continue
		}
		v := raw[f.col]
		if v == nil {
			if !f.ptr {
				return b, false
			}
			if f.omitEmpty {
				continue
			}
			if !first {
				b = append(b, ',')
			}
			b = append(append(b, f.key...), "null"...)
			first = false
			continue
		}
		mark := len(b)
		if !first {
			b = append(b, ',')
		}
		b = append(b, f.key...)
		var ok, empty bool
		switch f.typ {
		case ftString:
			ok, empty = true, len(v) == 0
			b = logfmt.AppendJSONString(b, unsafe.String(unsafe.SliceData(v), len(v))) // read, not kept
		case ftBool:
			ok = len(v) == 1
			if ok {
				empty = v[0] == 0
				b = strconv.AppendBool(b, v[0] != 0)
			}
		case ftInt:
			var n int64
			switch len(v) {
			case 2:
				n, ok = int64(int16(binary.BigEndian.Uint16(v))), true
			case 4:
				n, ok = int64(int32(binary.BigEndian.Uint32(v))), true
			case 8:
				n, ok = int64(binary.BigEndian.Uint64(v)), true
			}
			empty = n == 0
			b = strconv.AppendInt(b, n, 10)
		case ftFloat:
			if len(v) == 8 {
				x := math.Float64frombits(binary.BigEndian.Uint64(v))
				if ok = !math.IsNaN(x) && !math.IsInf(x, 0); ok {
					empty = x == 0
					b = logfmt.AppendJSONFloat(b, x)
				}
			}
		case ftUUID:
			if ok = len(v) == 16; ok {
				b = append(b, '"')
				b = logfmt.AppendUUID(b, v)
				b = append(b, '"')
			}
		case ftTime:
			if len(v) == 8 {
				us := int64(binary.BigEndian.Uint64(v))
				// as pgx decodes it (time.Unix: the local zone), then as time.Time's MarshalJSON writes it
				t := time.Unix(pgEpoch.Unix()+us/1_000_000, us%1_000_000*1_000)
				if y := t.Year(); us != math.MaxInt64 && us != math.MinInt64 && y >= 1 && y <= 9999 {
					ok = true
					b = append(b, '"')
					if _, off := t.Zone(); off == 0 { // RFC 3339 at offset zero: Z
						b, _ = appendCivil(b, us, true)
					} else {
						b = t.AppendFormat(b, time.RFC3339Nano)
					}
					b = append(b, '"')
				}
			}
		case ftDate:
			if len(v) == 4 {
				days := int32(binary.BigEndian.Uint32(v))
				if days != math.MaxInt32 && days != math.MinInt32 {
					b = append(b, '"')
					if b, ok = appendDate(b, int64(days)); ok {
						b = append(b, '"')
					}
				}
			}
		}
		if !ok {
			return b, false
		}
		if f.omitEmpty && empty && !f.ptr {
			b = b[:mark]
			continue
		}
		first = false
	}
	return append(b, '}'), true
}

// exportTableCopy emits every revision of one table's records at the site
// as exportTable does, read with one COPY in binary format: the database
// sends the rows without the per-row protocol of a result, and recordEncoder
// writes each from its raw values (a row it declines is decoded into T as
// pgx decodes a result row, and encoded by encoding/json). It reports false
// when T has a field recordEncoder does not write.
func exportTableCopy[T any](ctx context.Context, tx pgx.Tx, t table, site string, sink exportSink) (int64, bool, error) {
	q := "SELECT " + t.columns() + " FROM " + t.name + " WHERE site = " + quoteLiteral(site)
	sd, err := tx.Conn().PgConn().Prepare(ctx, "", q, nil)
	if err != nil {
		return 0, false, fmt.Errorf("db: export %s: %w", t.name, err)
	}
	fds := slices.Clone(sd.Fields)
	for i := range fds {
		fds[i].Format = pgtype.BinaryFormatCode // COPY's binary format is each type's binary form
	}
	enc := newRecordEncoder(reflect.TypeFor[T](), fds)
	if enc == nil {
		return 0, false, nil
	}
	paths, err := structPaths[T](fds)
	if err != nil {
		return 0, false, fmt.Errorf("db: export %s: %w", t.name, err)
	}
	tm := tx.Conn().TypeMap()
	var n int64
	r := &copyReader{cols: len(fds), row: func(raw [][]byte) error {
		if out := sink.out; out != nil { // written in place
			b, ok := enc.append(out.begin(t.entity), raw)
			if ok {
				n++
				return out.end(b)
			}
			out.drop(b)
		} else if b, ok := enc.append(make([]byte, 0, 512), raw); ok {
			n++
			return sink.emit(t.entity, recordJSON(b))
		}
		var v T
		rv := reflect.ValueOf(&v).Elem()
		for i, p := range paths {
			if err := tm.Scan(fds[i].DataTypeOID, pgtype.BinaryFormatCode, raw[i], rv.FieldByIndex(p).Addr().Interface()); err != nil {
				return fmt.Errorf("db: export %s: column %s: %w", t.name, fds[i].Name, err)
			}
		}
		n++
		return sink.emit(t.entity, v)
	}}
	if _, err := tx.Conn().PgConn().CopyTo(ctx, r, "COPY ("+q+") TO STDOUT (FORMAT binary)"); err != nil {
		return n, true, err
	}
	if !r.ended {
		return n, true, fmt.Errorf("db: export %s: the copy ended early", t.name)
	}
	return n, true, nil
}

// copyReader reads COPY's binary format as the database writes it and
// hands each row's raw values (valid during the call) to row.
type copyReader struct {
	cols   int
	row    func(raw [][]byte) error
	buf    []byte
	raw    [][]byte
	header bool
	ended  bool
}

// copySignature opens COPY's binary format.
const copySignature = "PGCOPY\n\xff\r\n\x00"

func (c *copyReader) Write(p []byte) (int, error) {
	c.buf = append(c.buf, p...)
	b, off := c.buf, 0
	if !c.header {
		if len(b) < 19 {
			return len(p), nil
		}
		if string(b[:11]) != copySignature {
			return 0, fmt.Errorf("not COPY's binary format")
		}
		ext := int(binary.BigEndian.Uint32(b[15:19]))
		if len(b) < 19+ext {
			return len(p), nil
		}
		off, c.header = 19+ext, true
		c.raw = make([][]byte, c.cols)
	}
	for !c.ended && len(b)-off >= 2 {
		nf := int16(binary.BigEndian.Uint16(b[off:]))
		if nf == -1 {
			c.ended, off = true, off+2
			break
		}
		if int(nf) != c.cols {
			return 0, fmt.Errorf("COPY row of %d fields, want %d", nf, c.cols)
		}
		q, whole := off+2, true
		for i := range c.cols {
			if len(b)-q < 4 {
				whole = false
				break
			}
			l := int32(binary.BigEndian.Uint32(b[q:]))
			q += 4
			if l == -1 {
				c.raw[i] = nil
				continue
			}
			if l < 0 || len(b)-q < int(l) {
				whole = false
				break
			}
			c.raw[i] = b[q : q+int(l) : q+int(l)]
			q += int(l)
		}
		if !whole {
			break
		}
		if err := c.row(c.raw); err != nil {
			return 0, err
		}
		off = q
	}
	c.buf = append(c.buf[:0], b[off:]...)
	return len(p), nil
}
