package logfmt

import (
	"bytes"
	"encoding/json"
	"fmt"
	"unicode/utf8"
)

// Export line kinds that carry the log. An export is newline-delimited JSON,
// one {"kind": ..., "record": ...} object per line; lines of other kinds are
// the records in their readable form and do not take part in verification.
const (
	LineHeader     = "export"     // record: ExportHeader, first line
	LineCheckpoint = "checkpoint" // record: ExportCheckpoint, the latest signed checkpoint in the export's snapshot
	LineLeaf       = "leaf"       // record: ExportLeaf, one per leaf in index order
	LineUnlogged   = "unlogged"   // record: Unlogged, a stored fact that has no leaf
	LineError      = "error"      // the export broke off: discard the file
)

// ExportHeader names the site whose log the export holds.
type ExportHeader struct {
	Site   string `json:"site"`
	Format int    `json:"format"`
}

// ExportCheckpoint is a signed checkpoint as exported.
type ExportCheckpoint struct {
	Note string `json:"note"`
}

// ExportLeaf is one leaf of the log with the fact it commits to, encoded
// again from the stored row when the export was made. Fields is null when
// the row is gone (Missing says why).
type ExportLeaf struct {
	Index    uint64  `json:"index"`
	Kind     string  `json:"fact_kind"`
	Version  int     `json:"version"`
	RecordID string  `json:"record_id"`
	Revision int     `json:"revision"`
	Fields   []Field `json:"fields"`
	Missing  string  `json:"missing,omitempty"`
	LeafHash []byte  `json:"leaf_hash"`
	// Who, what, why and when as the log's listing shows them; they must
	// agree with the fact's own fields, which the leaf hash covers.
	Actor  string `json:"actor"`
	Action string `json:"action"`
	Reason string `json:"reason"`
	At     string `json:"at"`
}

// listedAs maps a listing attribute to the fact fields that must equal it.
var listedAs = map[string][]string{
	"actor":  {"created_by", "activated_by"},
	"reason": {"reason"},
	"at":     {"created_at", "activated_at"},
}

// listingMismatch names a listing attribute that disagrees with the fact.
func (l ExportLeaf) listingMismatch() string {
	listed := map[string]string{"actor": l.Actor, "reason": l.Reason, "at": l.At}
	for _, attr := range []string{"actor", "reason", "at"} {
		for _, f := range l.Fields {
			for _, name := range listedAs[attr] {
				if f.Name == name && !f.Null && f.Value != listed[attr] {
					return attr
				}
			}
		}
	}
	return ""
}

// Fact returns the exported fact.
func (l ExportLeaf) Fact() Fact { return Fact{Kind: l.Kind, Version: l.Version, Fields: l.Fields} }

// Unlogged is a stored fact with no leaf in the log and no authentic pending
// leaf: written behind the service's back.
type Unlogged struct {
	Kind     string `json:"fact_kind"`
	RecordID string `json:"record_id"`
	Revision int    `json:"revision"`
	Why      string `json:"why"`
}

// MarshalJSON writes a field as [name, value] with null for SQL NULL, so the
// order of fields survives any JSON tool.
func (f Field) MarshalJSON() ([]byte, error) {
	if f.Null {
		return json.Marshal([]any{f.Name, nil})
	}
	return json.Marshal([]string{f.Name, f.Value})
}

// UnmarshalJSON reads [name, value] or [name, null]. encoding/json hands
// it a value it has already found to be valid JSON, so a pair of plain
// strings (no escape, valid UTF-8) is taken from the bytes as they are,
// which is what decoding them gives; any other pair is decoded by
// encoding/json (a verify reads one pair per field of every leaf).
func (f *Field) UnmarshalJSON(b []byte) error {
	if name, value, null, ok := plainPair(b); ok {
		f.Name, f.Value, f.Null = name, value, null
		return nil
	}
	var pair []*string
	if err := json.Unmarshal(b, &pair); err != nil {
		return err
	}
	if len(pair) != 2 || pair[0] == nil {
		return fmt.Errorf("a field is [name, value], got %s", b)
	}
	f.Name, f.Null, f.Value = *pair[0], pair[1] == nil, ""
	if pair[1] != nil {
		f.Value = *pair[1]
	}
	return nil
}

// plainPair reads the valid JSON value b when it is [name, value] or
// [name, null] with plain strings; ok is false for anything else.
func plainPair(b []byte) (name, value string, null, ok bool) {
	i := skipSpace(b, 0)
	if i >= len(b) || b[i] != '[' {
		return "", "", false, false
	}
	if name, i, ok = plainString(b, skipSpace(b, i+1)); !ok {
		return "", "", false, false
	}
	if i = skipSpace(b, i); i >= len(b) || b[i] != ',' {
		return "", "", false, false
	}
	i = skipSpace(b, i+1)
	if null = bytes.HasPrefix(b[i:], []byte("null")); null {
		i += len("null")
	} else if value, i, ok = plainString(b, i); !ok {
		return "", "", false, false
	}
	if i = skipSpace(b, i); i != len(b)-1 || b[i] != ']' {
		return "", "", false, false
	}
	return name, value, null, true
}

// plainString reads the JSON string at b[i] when it holds no escape and
// valid UTF-8, returning it and the index after its closing quote.
func plainString(b []byte, i int) (string, int, bool) {
	if i >= len(b) || b[i] != '"' {
		return "", i, false
	}
	j := bytes.IndexByte(b[i+1:], '"')
	if j < 0 {
		return "", i, false
	}
	s := b[i+1 : i+1+j]
	if bytes.IndexByte(s, '\\') >= 0 || !utf8.Valid(s) {
		return "", i, false
	}
	return string(s), i + 2 + j, true
}

// skipSpace returns the index of the first byte at or after i that is not
// JSON white space.
func skipSpace(b []byte, i int) int {
	for i < len(b) && (b[i] == ' ' || b[i] == '\t' || b[i] == '\n' || b[i] == '\r') {
		i++
	}
	return i
}
