package db

import (
	"encoding/base64"
	"encoding/binary"
	"fmt"
	"math"
	"strconv"
	"time"

	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"etchlog/db/logfmt"
)

// The export reads millions of leaves; decoding each value into an
// interface and formatting it from there costs more than the database
// takes to send it. appendCanonicalRaw writes the canonical text (factOf) of the
// common column types straight from PostgreSQL's binary format; any other
// type, or a text-format value, is decoded by pgx and goes through
// canonicalText as before. TestAuditorOfflineVerify and the tampering tests
// recompute every exported leaf's hash, which the writer computed through
// factOf, so a difference between the two paths fails them.

// pgEpoch is 2000-01-01 UTC, where PostgreSQL's binary dates and times count from.
var pgEpoch = time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC)

// appendCanonicalRaw appends the canonical text of one non-NULL binary
// value (or text value of a text type) to dst, or reports false when the
// type (or an infinite date or time) needs the general path.
func appendCanonicalRaw(dst []byte, oid uint32, format int16, b []byte) ([]byte, bool) {
	switch oid {
	case pgtype.TextOID, pgtype.VarcharOID, pgtype.NameOID, pgtype.BPCharOID:
		return append(dst, b...), true // the text and binary formats of text are the same bytes (pgx asks for text)
	}
	if format != pgtype.BinaryFormatCode {
		return dst, false
	}
	switch oid {
	case pgtype.BoolOID:
		if len(b) != 1 {
			return dst, false
		}
		return strconv.AppendBool(dst, b[0] != 0), true
	case pgtype.Int2OID:
		if len(b) != 2 {
			return dst, false
		}
		return strconv.AppendInt(dst, int64(int16(binary.BigEndian.Uint16(b))), 10), true
	case pgtype.Int4OID:
		if len(b) != 4 {
			return dst, false
		}
		return strconv.AppendInt(dst, int64(int32(binary.BigEndian.Uint32(b))), 10), true
	case pgtype.Int8OID:
		if len(b) != 8 {
			return dst, false
		}
		return strconv.AppendInt(dst, int64(binary.BigEndian.Uint64(b)), 10), true
	case pgtype.Float8OID:
		if len(b) != 8 {
			return dst, false
		}
		return strconv.AppendFloat(dst, math.Float64frombits(binary.BigEndian.Uint64(b)), 'g', -1, 64), true
	case pgtype.UUIDOID:
		if len(b) != 16 {
			return dst, false
		}
		return logfmt.AppendUUID(dst, b), true
	case pgtype.DateOID:
		if len(b) != 4 {
			return dst, false
		}
		days := int32(binary.BigEndian.Uint32(b))
		if days == math.MaxInt32 || days == math.MinInt32 {
			return dst, false
		}
		return pgEpoch.AddDate(0, 0, int(days)).AppendFormat(dst, time.DateOnly), true
	case pgtype.TimestamptzOID:
		if len(b) != 8 {
			return dst, false
		}
		us := int64(binary.BigEndian.Uint64(b))
		if us == math.MaxInt64 || us == math.MinInt64 {
			return dst, false
		}
		return appendRawTime(dst, us), true
	case pgtype.ByteaOID:
		return base64.StdEncoding.AppendEncode(dst, b), true
	}
	return dst, false
}

// appendRawTime appends microseconds since pgEpoch as the canonical timestamptz text.
func appendRawTime(dst []byte, us int64) []byte {
	return time.Unix(pgEpoch.Unix()+us/1e6, (us%1e6)*1e3).UTC().AppendFormat(dst, "2006-01-02T15:04:05.000000Z")
}

// factFromRaw is factFrom over raw column values: appendCanonicalRaw where it
// can, else the value decoded by tm and canonicalText.
func factFromRaw(k LeafKind, fds []pgconn.FieldDescription, raw [][]byte, tm *pgtype.Map) (logfmt.Fact, error) {
	f := logfmt.Fact{Kind: k.Kind, Version: k.Version, Fields: make([]logfmt.Field, len(fds))}
	// The common values' texts go into one buffer, made one string at the
	// end, so a row costs one allocation for them instead of one each.
	var text []byte
	var ends [64]int
	fast := len(fds) <= len(ends)
	for i, fd := range fds {
		if raw[i] == nil {
			f.Fields[i] = logfmt.Field{Name: fd.Name, Null: true}
			continue
		}
		if fast && fd.DataTypeOID != pgtype.JSONBOID && fd.DataTypeOID != pgtype.JSONOID {
			start := len(text)
			var ok bool
			if text, ok = appendCanonicalRaw(text, fd.DataTypeOID, fd.Format, raw[i]); ok {
				f.Fields[i] = logfmt.Field{Name: fd.Name}
				ends[i] = len(text)
				if start == len(text) {
					ends[i] = -1 // an empty text
				}
				continue
			}
			text = text[:start]
		}
		var v any
		if raw[i] != nil {
			t, ok := tm.TypeForOID(fd.DataTypeOID)
			if !ok {
				return f, fmt.Errorf("%s.%s: no canonical text for column type %d", k.Kind, fd.Name, fd.DataTypeOID)
			}
			var err error
			if v, err = t.Codec.DecodeValue(tm, fd.DataTypeOID, fd.Format, raw[i]); err != nil {
				return f, err
			}
		}
		one, err := factFrom(k, fds[i:i+1], []any{v}, raw[i:i+1])
		if err != nil {
			return f, err
		}
		f.Fields[i] = one.Fields[0]
	}
	if fast && len(text) > 0 {
		all, start := string(text), 0
		for i := range f.Fields {
			if e := ends[i]; e > 0 {
				f.Fields[i].Value = all[start:e]
				start = e
			}
		}
	}
	return f, nil
}
