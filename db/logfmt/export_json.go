package logfmt

import (
	"encoding/base64"
	"encoding/hex"
	"math"
	"strconv"
	"unicode/utf8"
)

// AppendJSON appends the leaf as encoding/json writes it (the same keys in
// the same order, the same string escaping, the leaf hash in standard
// base64), without reflection: an export writes one per leaf.
func (l ExportLeaf) AppendJSON(b []byte) []byte {
	b = append(b, `{"index":`...)
	b = strconv.AppendUint(b, l.Index, 10)
	b = append(b, `,"fact_kind":`...)
	b = AppendJSONString(b, l.Kind)
	b = append(b, `,"version":`...)
	b = strconv.AppendInt(b, int64(l.Version), 10)
	b = append(b, `,"record_id":`...)
	b = AppendJSONString(b, l.RecordID)
	b = append(b, `,"revision":`...)
	b = strconv.AppendInt(b, int64(l.Revision), 10)
	b = append(b, `,"fields":`...)
	if l.Fields == nil {
		b = append(b, "null"...)
	} else {
		b = append(b, '[')
		for i, f := range l.Fields {
			if i > 0 {
				b = append(b, ',')
			}
			b = append(b, '[')
			b = AppendJSONString(b, f.Name)
			if f.Null {
				b = append(b, ",null]"...)
				continue
			}
			b = append(b, ',')
			b = AppendJSONString(b, f.Value)
			b = append(b, ']')
		}
		b = append(b, ']')
	}
	if l.Missing != "" {
		b = append(b, `,"missing":`...)
		b = AppendJSONString(b, l.Missing)
	}
	b = append(b, `,"leaf_hash":`...)
	if l.LeafHash == nil {
		b = append(b, "null"...)
	} else {
		b = append(b, '"')
		b = base64.StdEncoding.AppendEncode(b, l.LeafHash)
		b = append(b, '"')
	}
	b = append(b, `,"actor":`...)
	b = AppendJSONString(b, l.Actor)
	b = append(b, `,"action":`...)
	b = AppendJSONString(b, l.Action)
	b = append(b, `,"reason":`...)
	b = AppendJSONString(b, l.Reason)
	b = append(b, `,"at":`...)
	b = AppendJSONString(b, l.At)
	return append(b, '}')
}

const hexDigits = "0123456789abcdef"

// AppendUUID appends the canonical (lower-case, hyphenated) form of the
// 16 bytes of a UUID u, as uuid.UUID.String writes it.
func AppendUUID(dst, u []byte) []byte {
	var buf [36]byte
	hex.Encode(buf[0:8], u[0:4])
	buf[8] = '-'
	hex.Encode(buf[9:13], u[4:6])
	buf[13] = '-'
	hex.Encode(buf[14:18], u[6:8])
	buf[18] = '-'
	hex.Encode(buf[19:23], u[8:10])
	buf[23] = '-'
	hex.Encode(buf[24:], u[10:])
	return append(dst, buf[:]...)
}

// AppendJSONString appends s as a JSON string the way encoding/json writes
// it by default: control characters, quote and backslash escaped, <, > and
// & as \u003c, \u003e, \u0026, U+2028 and U+2029 escaped, and each byte of
// invalid UTF-8 as \ufffd.
func AppendJSONString(b []byte, s string) []byte {
	b = append(b, '"')
	start := 0
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			if c >= 0x20 && c != '"' && c != '\\' && c != '<' && c != '>' && c != '&' {
				i++
				continue
			}
			b = append(b, s[start:i]...)
			switch c {
			case '"', '\\':
				b = append(b, '\\', c)
			case '\b':
				b = append(b, '\\', 'b')
			case '\f':
				b = append(b, '\\', 'f')
			case '\n':
				b = append(b, '\\', 'n')
			case '\r':
				b = append(b, '\\', 'r')
			case '\t':
				b = append(b, '\\', 't')
			default:
				b = append(b, '\\', 'u', '0', '0', hexDigits[c>>4], hexDigits[c&0xF])
			}
			i++
			start = i
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && size == 1 {
			b = append(b, s[start:i]...)
			b = append(b, `\ufffd`...)
			i += size
			start = i
			continue
		}
		if r == '\u2028' || r == '\u2029' {
			b = append(b, s[start:i]...)
			b = append(b, '\\', 'u', '2', '0', '2', hexDigits[r&0xF])
			i += size
			start = i
			continue
		}
		i += size
	}
	b = append(b, s[start:]...)
	return append(b, '"')
}

// AppendJSONFloat appends a finite float64 as encoding/json writes it: the
// shortest decimal that reads back the same, plain between 1e-6 and 1e21,
// else with an exponent of at least one digit (e-07 written e-7).
func AppendJSONFloat(b []byte, f float64) []byte {
	format := byte('f')
	if abs := math.Abs(f); abs != 0 && (abs < 1e-6 || abs >= 1e21) {
		format = 'e'
	}
	b = strconv.AppendFloat(b, f, format, -1, 64)
	if n := len(b); format == 'e' && n >= 4 && b[n-4] == 'e' && b[n-3] == '-' && b[n-2] == '0' {
		b[n-2] = b[n-1]
		b = b[:n-1]
	}
	return b
}
