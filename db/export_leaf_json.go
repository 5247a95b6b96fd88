package db

import (
	"encoding/base64"
	"encoding/binary"
	"math"
	"strconv"
	"unsafe"

	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

	"etchlog/db/logfmt"
)

// A leaf line of the endpoint's export is written straight from the bytes
// the database sent: the leaf's listing and its row's values, each in
// PostgreSQL's binary format, are kept packed (one allocation a row, none a
// leaf) until the writer appends the line, byte for byte as
// logfmt.ExportLeaf.AppendJSON (itself encoding/json's bytes) writes the
// leaf that factFromRaw and leafOfListing decode from the same bytes. Store.Export
// still hands its caller that decoded leaf; TestExportToMatchesEncodingJSON
// compares the two paths' files byte for byte.

// packRow appends raw values packed: for each a 4-byte big-endian length
// (0xFFFFFFFF for NULL), then its bytes.
func packRow(dst []byte, raw [][]byte) []byte {
	for _, v := range raw {
		if v == nil {
			dst = append(dst, 0xff, 0xff, 0xff, 0xff)
			continue
		}
		dst = binary.BigEndian.AppendUint32(dst, uint32(len(v)))
		dst = append(dst, v...)
	}
	return dst
}

// packedRow is packRow's result in one allocation of its own.
func packedRow(raw [][]byte) []byte {
	n := 4 * len(raw)
	for _, v := range raw {
		n += len(v)
	}
	return packRow(make([]byte, 0, n), raw)
}

// unpackRow splits a packed row into out[:0], its values sharing p's bytes.
func unpackRow(out [][]byte, p []byte) [][]byte {
	out = out[:0]
	for len(p) >= 4 {
		l := binary.BigEndian.Uint32(p)
		p = p[4:]
		if l == 0xffffffff {
			out = append(out, nil)
			continue
		}
		out = append(out, p[:l:l])
		p = p[l:]
	}
	return out
}

// listingColumns is the listing of a leaf as every leaf query selects it,
// followed by one boolean (whether a row follows).
const listingColumns = "leaf_index, kind, version, record_id, revision, leaf_hash, actor, action, reason, at"

// listingOK reports whether a leaf's listing (the first ten values of a
// leaf query's row) is in the binary form leafOfListing and appendListedLeaf
// read; a leaf whose listing is not is decoded by the driver.
func listingOK(fds []pgconn.FieldDescription, raw [][]byte) bool {
	for i := range 10 {
		text := fds[i].DataTypeOID == pgtype.TextOID // the same bytes in either format; pgx asks for text
		if !text && fds[i].Format != pgtype.BinaryFormatCode || raw[i] == nil {
			return false
		}
	}
	if len(raw[0]) != 8 || len(raw[2]) != 4 || len(raw[3]) != 16 || len(raw[4]) != 4 || len(raw[9]) != 8 {
		return false
	}
	us := int64(binary.BigEndian.Uint64(raw[9]))
	return us != math.MaxInt64 && us != math.MinInt64
}

// leafOfListing is the leaf of a packed listing that listingOK accepted,
// without its fields.
func leafOfListing(raw [][]byte) logfmt.ExportLeaf {
	// The texts go into one string (one allocation a leaf, not six).
	var buf [512]byte
	b := append(buf[:0], raw[1]...)
	b = logfmt.AppendUUID(b, raw[3])
	b = append(append(append(b, raw[6]...), raw[7]...), raw[8]...)
	b = appendRawTime(b, int64(binary.BigEndian.Uint64(raw[9])))
	all := string(b)
	cut := func(n int) string { s := all[:n]; all = all[n:]; return s }
	l := logfmt.ExportLeaf{Index: binary.BigEndian.Uint64(raw[0]), Kind: cut(len(raw[1])),
		Version: int(int32(binary.BigEndian.Uint32(raw[2]))), RecordID: cut(36),
		Revision: int(int32(binary.BigEndian.Uint32(raw[4]))), LeafHash: append([]byte{}, raw[5]...)}
	l.Actor, l.Action, l.Reason = cut(len(raw[6])), cut(len(raw[7])), cut(len(raw[8]))
	l.At = all
	return l
}

// factWriter appends the fields of one kind's facts, as the JSON array of
// [name, value] pairs that ExportLeaf.AppendJSON writes, from the raw
// values of rows described by fds.
type factWriter struct {
	k     LeafKind
	fds   []pgconn.FieldDescription
	names [][]byte // `["name",` for each column
}

func newFactWriter(k LeafKind, fds []pgconn.FieldDescription) *factWriter {
	w := &factWriter{k: k, fds: fds, names: make([][]byte, len(fds))}
	for i, fd := range fds {
		w.names[i] = append(logfmt.AppendJSONString([]byte{'['}, fd.Name), ',')
	}
	return w
}

// appendFields appends the fields of the row raw. A value appendCanonicalRaw
// does not write (jsonb, arrays, a text-format value) goes through
// factFromRaw's own path, so its text is the one the decoded leaf holds.
func (w *factWriter) appendFields(b []byte, raw [][]byte, tm *pgtype.Map) ([]byte, error) {
	b = append(b, '[')
	for i, fd := range w.fds {
		if i > 0 {
			b = append(b, ',')
		}
		b = append(b, w.names[i]...)
		v := raw[i]
		if v == nil {
			b = append(b, "null]"...)
			continue
		}
		switch fd.DataTypeOID {
		case pgtype.TextOID, pgtype.VarcharOID, pgtype.NameOID, pgtype.BPCharOID:
			b = logfmt.AppendJSONString(b, unsafe.String(unsafe.SliceData(v), len(v))) // read, not kept
			b = append(b, ']')
			continue
		case pgtype.TimestamptzOID, pgtype.DateOID:
			if out, ok := appendTimeValue(append(b, '"'), fd, v); ok {
				b = append(out, '"', ']')
				continue
			}
		}
		if fd.DataTypeOID != pgtype.JSONBOID && fd.DataTypeOID != pgtype.JSONOID {
			// The canonical texts of these types need no JSON escaping.
			if out, ok := appendCanonicalRaw(append(b, '"'), fd.DataTypeOID, fd.Format, v); ok {
				b = append(out, '"', ']')
				continue
			}
		}
		f, err := factFromRaw(w.k, w.fds[i:i+1], raw[i:i+1], tm)
		if err != nil {
			return b, err
		}
		b = logfmt.AppendJSONString(b, f.Fields[0].Value)
		b = append(b, ']')
	}
	return append(b, ']'), nil
}

// appendTimeValue appends a binary timestamptz or date's canonical text as
// appendCanonicalRaw does, through appendCivil, or reports false (infinite,
// out of its years, not binary).
func appendTimeValue(b []byte, fd pgconn.FieldDescription, v []byte) ([]byte, bool) {
	if fd.Format != pgtype.BinaryFormatCode {
		return b, false
	}
	switch {
	case fd.DataTypeOID == pgtype.TimestamptzOID && len(v) == 8:
		us := int64(binary.BigEndian.Uint64(v))
		if us == math.MaxInt64 || us == math.MinInt64 {
			return b, false
		}
		return appendCivil(b, us, false)
	case fd.DataTypeOID == pgtype.DateOID && len(v) == 4:
		days := int32(binary.BigEndian.Uint32(v))
		if days == math.MaxInt32 || days == math.MinInt32 {
			return b, false
		}
		return appendDate(b, int64(days))
	}
	return b, false
}

// Reasons a leaf has no fields.
const (
	missingRow  = "no such row at the site"
	unknownKind = "this etchlog does not know the fact kind "
)

// appendListedLeaf appends a leaf as ExportLeaf.AppendJSON writes it, from
// its packed listing (listingOK) and, unless missing is set, its fields
// appended by fields.
func appendListedLeaf(b []byte, list [][]byte, missing string, fields func([]byte) ([]byte, error)) ([]byte, error) {
	b = append(b, `{"index":`...)
	b = strconv.AppendUint(b, binary.BigEndian.Uint64(list[0]), 10)
	b = append(b, `,"fact_kind":`...)
	b = logfmt.AppendJSONString(b, unsafe.String(unsafe.SliceData(list[1]), len(list[1])))
	b = append(b, `,"version":`...)
	b = strconv.AppendInt(b, int64(int32(binary.BigEndian.Uint32(list[2]))), 10)
	b = append(b, `,"record_id":"`...)
	b = logfmt.AppendUUID(b, list[3])
	b = append(b, `","revision":`...)
	b = strconv.AppendInt(b, int64(int32(binary.BigEndian.Uint32(list[4]))), 10)
	b = append(b, `,"fields":`...)
	if missing != "" {
		b = append(b, "null"...)
		b = append(b, `,"missing":`...)
		b = logfmt.AppendJSONString(b, missing)
	} else {
		var err error
		if b, err = fields(b); err != nil {
			return b, err
		}
	}
	b = append(b, `,"leaf_hash":"`...)
	b = base64.StdEncoding.AppendEncode(b, list[5])
	b = append(b, `","actor":`...)
	b = logfmt.AppendJSONString(b, unsafe.String(unsafe.SliceData(list[6]), len(list[6])))
	b = append(b, `,"action":`...)
	b = logfmt.AppendJSONString(b, unsafe.String(unsafe.SliceData(list[7]), len(list[7])))
	b = append(b, `,"reason":`...)
	b = logfmt.AppendJSONString(b, unsafe.String(unsafe.SliceData(list[8]), len(list[8])))
	b = append(b, `,"at":"`...)
	b = appendExportTime(b, int64(binary.BigEndian.Uint64(list[9])))
	return append(b, '"', '}'), nil
}
