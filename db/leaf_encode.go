package db

import (
	"bytes"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"strconv"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"etchlog/db/logfmt"
)

// factOf encodes the current row of rows as a fact of kind k. It is the one
// function that turns a stored row into the fact its leaf commits to, used
// when the leaf is written, exported and verified alike. The canonical text
// of each value (README, "The record log") depends only on the column type:
//
//	text        the text itself
//	boolean     true | false
//	integer     decimal, e.g. 3
//	double      shortest decimal that reads back as the same binary64, e.g. 21.5, 1e-05
//	uuid        lower-case 8-4-4-4-12 hex
//	date        2006-01-02
//	timestamptz UTC with six fractional digits, e.g. 2026-11-03T08:00:00.000000Z
//	jsonb       JSON, object keys sorted by byte, no spaces, numbers as stored
//	arrays      a JSON array of the elements' canonical texts, e.g. ["1G","2F"]
func factOf(k LeafKind, rows pgx.Rows) (logfmt.Fact, error) {
	vals, err := rows.Values()
	if err != nil {
		return logfmt.Fact{}, err
	}
	return factFrom(k, rows.FieldDescriptions(), vals, rows.RawValues())
}

// factFrom is factOf over one row's columns, already read.
func factFrom(k LeafKind, fds []pgconn.FieldDescription, vals []any, raw [][]byte) (logfmt.Fact, error) {
	var err error
	f := logfmt.Fact{Kind: k.Kind, Version: k.Version, Fields: make([]logfmt.Field, len(fds))}
	for i, fd := range fds {
		fl := logfmt.Field{Name: fd.Name}
		switch {
		case raw[i] == nil:
			fl.Null = true
		case fd.DataTypeOID == pgtype.JSONBOID || fd.DataTypeOID == pgtype.JSONOID:
			b := raw[i]
			if fd.Format == pgtype.BinaryFormatCode && fd.DataTypeOID == pgtype.JSONBOID && len(b) > 0 {
				b = b[1:] // the binary jsonb format is a version byte, then the text
			}
			if fl.Value, err = canonicalJSON(b); err != nil {
				return f, fmt.Errorf("%s.%s: %w", k.Kind, fd.Name, err)
			}
		default:
			if fl.Value, err = canonicalText(fd.DataTypeOID, vals[i]); err != nil {
				return f, fmt.Errorf("%s.%s: %w", k.Kind, fd.Name, err)
			}
		}
		f.Fields[i] = fl
	}
	return f, nil
}

// arrayElem maps an array type to its element type.
var arrayElem = map[uint32]uint32{
	pgtype.TextArrayOID: pgtype.TextOID, pgtype.UUIDArrayOID: pgtype.UUIDOID, pgtype.Float8ArrayOID: pgtype.Float8OID,
	pgtype.Int4ArrayOID: pgtype.Int4OID, pgtype.Int8ArrayOID: pgtype.Int8OID, pgtype.BoolArrayOID: pgtype.BoolOID,
	pgtype.DateArrayOID: pgtype.DateOID, pgtype.TimestamptzArrayOID: pgtype.TimestamptzOID,
}

// canonicalText is the canonical text of one non-NULL decoded value.
func canonicalText(oid uint32, v any) (string, error) {
	switch oid {
	case pgtype.TextOID, pgtype.VarcharOID, pgtype.NameOID, pgtype.BPCharOID:
		return v.(string), nil
	case pgtype.BoolOID:
		return strconv.FormatBool(v.(bool)), nil
	case pgtype.Int2OID, pgtype.Int4OID, pgtype.Int8OID:
		return fmt.Sprint(v), nil
	case pgtype.Float8OID:
		return strconv.FormatFloat(v.(float64), 'g', -1, 64), nil
	case pgtype.Float4OID:
		return strconv.FormatFloat(float64(v.(float32)), 'g', -1, 32), nil
	case pgtype.UUIDOID:
		return uuid.UUID(v.([16]byte)).String(), nil
	case pgtype.DateOID:
		t, ok := v.(time.Time)
		if !ok {
			return "", fmt.Errorf("date %v is not finite", v)
		}
		return t.Format(time.DateOnly), nil
	case pgtype.TimestamptzOID:
		t, ok := v.(time.Time)
		if !ok {
			return "", fmt.Errorf("time %v is not finite", v)
		}
		return t.UTC().Format("2006-01-02T15:04:05.000000Z"), nil
	case pgtype.ByteaOID:
		return base64.StdEncoding.EncodeToString(v.([]byte)), nil
	}
	if elem, ok := arrayElem[oid]; ok {
		items, _ := v.([]any)
		out := make([]*string, len(items))
		for i, it := range items {
			if it == nil {
				continue
			}
			s, err := canonicalText(elem, it)
			if err != nil {
				return "", err
			}
			out[i] = &s
		}
		b, err := json.Marshal(out)
		return string(b), err
	}
	return "", fmt.Errorf("no canonical text for column type %d; add one before logging it", oid)
}

// canonicalJSON re-serialises JSON with sorted keys, no insignificant space,
// no HTML escaping and every number exactly as written.
func canonicalJSON(b []byte) (string, error) {
	d := json.NewDecoder(bytes.NewReader(b))
	d.UseNumber()
	var v any
	if err := d.Decode(&v); err != nil {
		return "", err
	}
	var out bytes.Buffer
	e := json.NewEncoder(&out)
	e.SetEscapeHTML(false)
	if err := e.Encode(v); err != nil {
		return "", err
	}
	return string(bytes.TrimSuffix(out.Bytes(), []byte("\n"))), nil
}
