package db

import (
	"encoding/base64"
	"encoding/binary"
	"fmt"
	"math"
	"strconv"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"etchlog/db/logfmt"
)

// The export reads millions of leaves; decoding each value into an
// interface and formatting it from there costs more than the database
// takes to send it. canonicalRaw writes the canonical text (factOf) of the
// common column types straight from PostgreSQL's binary format; any other
// type, or a text-format value, is decoded by pgx and goes through
// canonicalText as before. TestAuditorOfflineVerify and the tampering tests
// recompute every exported leaf's hash, which the writer computed through
// factOf, so a difference between the two paths fails them.

// pgEpoch is 2000-01-01 UTC, where PostgreSQL's binary dates and times count from.
var pgEpoch = time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC)

// canonicalRaw returns the canonical text of one non-NULL binary value (or
// text value of a text type), or false when the type (or an infinite date or
// time) needs the general path.
func canonicalRaw(oid uint32, format int16, b []byte) (string, bool) {
	switch oid {
	case pgtype.TextOID, pgtype.VarcharOID, pgtype.NameOID, pgtype.BPCharOID:
		return string(b), true // the text and binary formats of text are the same bytes (pgx asks for text)
	}
	if format != pgtype.BinaryFormatCode {
		return "", false
	}
	switch oid {
	case pgtype.BoolOID:
		if len(b) != 1 {
			return "", false
		}
		return strconv.FormatBool(b[0] != 0), true
	case pgtype.Int2OID:
		if len(b) != 2 {
			return "", false
		}
		return strconv.FormatInt(int64(int16(binary.BigEndian.Uint16(b))), 10), true
	case pgtype.Int4OID:
		if len(b) != 4 {
			return "", false
		}
		return strconv.FormatInt(int64(int32(binary.BigEndian.Uint32(b))), 10), true
	case pgtype.Int8OID:
		if len(b) != 8 {
			return "", false
		}
		return strconv.FormatInt(int64(binary.BigEndian.Uint64(b)), 10), true
	case pgtype.Float8OID:
		if len(b) != 8 {
			return "", false
		}
		return strconv.FormatFloat(math.Float64frombits(binary.BigEndian.Uint64(b)), 'g', -1, 64), true
	case pgtype.UUIDOID:
		if len(b) != 16 {
			return "", false
		}
		return uuid.UUID(b).String(), true
	case pgtype.DateOID:
		if len(b) != 4 {
			return "", false
		}
		days := int32(binary.BigEndian.Uint32(b))
		if days == math.MaxInt32 || days == math.MinInt32 {
			return "", false
		}
		return pgEpoch.AddDate(0, 0, int(days)).Format(time.DateOnly), true
	case pgtype.TimestamptzOID:
		if len(b) != 8 {
			return "", false
		}
		us := int64(binary.BigEndian.Uint64(b))
		if us == math.MaxInt64 || us == math.MinInt64 {
			return "", false
		}
		return rawTime(us), true
	case pgtype.ByteaOID:
		return base64.StdEncoding.EncodeToString(b), true
	}
	return "", false
}

// rawTime formats microseconds since pgEpoch as the canonical timestamptz text.
func rawTime(us int64) string {
	return time.Unix(pgEpoch.Unix()+us/1e6, (us%1e6)*1e3).UTC().Format("2006-01-02T15:04:05.000000Z")
}

// factFromRaw is factFrom over raw column values: canonicalRaw where it
// can, else the value decoded by tm and canonicalText.
func factFromRaw(k LeafKind, fds []pgconn.FieldDescription, raw [][]byte, tm *pgtype.Map) (logfmt.Fact, error) {
	f := logfmt.Fact{Kind: k.Kind, Version: k.Version, Fields: make([]logfmt.Field, len(fds))}
	for i, fd := range fds {
		if raw[i] != nil && fd.DataTypeOID != pgtype.JSONBOID && fd.DataTypeOID != pgtype.JSONOID {
			if s, ok := canonicalRaw(fd.DataTypeOID, fd.Format, raw[i]); ok {
				f.Fields[i] = logfmt.Field{Name: fd.Name, Value: s}
				continue
			}
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
	return f, nil
}
