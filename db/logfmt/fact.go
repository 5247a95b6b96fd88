// Package logfmt is the byte-level format of etchlog's per-site record log:
// how one recorded fact is encoded as a leaf, how leaves hash into an RFC 9162
// Merkle tree, how checkpoints are signed, and how an export is verified
// without a database. It performs no I/O of its own, so the offline verifier
// and the service share exactly one definition of every byte.
package logfmt

import (
	"crypto/sha256"
	"encoding/binary"
	"strconv"
)

// FactHeader opens every encoded fact, so a leaf can never be mistaken for
// bytes of another format.
const FactHeader = "etchlog fact"

// Field is one named value of a fact in its canonical text form; Null marks
// an SQL NULL (Value is then empty and not encoded).
type Field struct {
	Name  string
	Value string
	Null  bool
}

// Fact is one recorded fact as it enters the log: its kind (coupon,
// production_record, ...), the version of that kind's field list, and the
// fields in the order the version lists them.
type Fact struct {
	Kind    string
	Version int
	Fields  []Field
}

// nullLength marks an SQL NULL where a length would stand.
const nullLength = 0xFFFFFFFF

func appendStr(b []byte, s string) []byte {
	b = binary.BigEndian.AppendUint32(b, uint32(len(s)))
	return append(b, s...)
}

// Encode returns the fact's leaf data:
//
//	str("etchlog fact") str(kind) str(decimal version) u32(field count)
//	then per field: str(name) and str(value), or u32(0xFFFFFFFF) for NULL
//
// where str(s) is s's UTF-8 byte length as a 4-byte big-endian unsigned
// integer followed by the bytes, and u32 is 4 bytes big-endian.
func (f Fact) Encode() []byte {
	n := 32 + len(f.Kind)
	for _, fl := range f.Fields {
		n += 8 + len(fl.Name) + len(fl.Value)
	}
	b := make([]byte, 0, n)
	b = appendStr(b, FactHeader)
	b = appendStr(b, f.Kind)
	b = appendStr(b, strconv.Itoa(f.Version))
	b = binary.BigEndian.AppendUint32(b, uint32(len(f.Fields)))
	for _, fl := range f.Fields {
		b = appendStr(b, fl.Name)
		if fl.Null {
			b = binary.BigEndian.AppendUint32(b, nullLength)
			continue
		}
		b = appendStr(b, fl.Value)
	}
	return b
}

// LeafHash is the RFC 9162 section 2.1.1 leaf hash of the fact:
// SHA-256(0x00 || Encode()).
func (f Fact) LeafHash() []byte { return HashLeaf(f.Encode()) }

// HashLeaf is SHA-256(0x00 || data), the leaf hash of RFC 9162 section 2.1.1.
func HashLeaf(data []byte) []byte {
	h := sha256.New()
	h.Write([]byte{0})
	h.Write(data)
	return h.Sum(nil)
}

// HashChildren is SHA-256(0x01 || left || right), the interior node hash of
// RFC 9162 section 2.1.1.
func HashChildren(left, right []byte) []byte {
	h := sha256.New()
	h.Write([]byte{1})
	h.Write(left)
	h.Write(right)
	return h.Sum(nil)
}
