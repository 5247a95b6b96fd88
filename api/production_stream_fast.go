package api

import (
	"math"
	"reflect"
	"strconv"
	"strings"
	"sync"
	"time"
	"unicode/utf8"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/predict"
)

// Almost every row of a production stream is a flat JSON object of plain
// strings and numbers, and reading it through the JSON body's path
// (checkBody's walk, the spelling rewrite's map and re-marshalling, the
// strict decode) costs more than the rest of its write. So a row is first
// read directly: one pass over its bytes, each key looked up among the
// fields and spellings the rewrite knows, each value parsed by the function
// the decode would call for its field (strconv.ParseFloat, uuid's
// UnmarshalText, time's UnmarshalJSON), a spelling converted by the same
// function as the rewrite, and the struct checked by the same validator
// (Server.check). Only when all of that finds nothing is the row taken. A
// row with anything to say, or anything this reading does not know (an
// escape in a string, null, a nested value, a key in another case, a field
// given twice, a number the grammar or float64 refuses, a conversion that
// overflows), is read again by the JSON path, which words every fault. So
// the rules and the words stay the JSON path's; this one only decides that
// there is nothing to word. TestStreamFastReadMatches and
// FuzzStreamFastRead compare the two.

// rowKind is a field type the direct reading knows.
type rowKind int

const (
	rowString rowKind = iota + 1
	rowUUID
	rowTime
	rowFloat
	rowFloatPtr
)

var rowKinds = map[reflect.Type]rowKind{
	reflect.TypeOf(""): rowString, reflect.TypeOf(uuid.UUID{}): rowUUID, reflect.TypeOf(time.Time{}): rowTime,
	reflect.TypeOf(0.0): rowFloat, reflect.TypeOf((*float64)(nil)): rowFloatPtr,
}

// rowKey is what one key of a row fills.
type rowKey struct {
	field    int                   // the field's index in the struct
	stored   string                // the field's stored name
	kind     rowKind               // its type
	toStored func(float64) float64 // the spelling's conversion (nil: the stored spelling)
}

// rowReader reads flat JSON objects directly into one struct type.
type rowReader struct {
	keys     map[string]rowKey
	required uint64 // fields some key must give (the rewrite requires them)
}

// newRowReader prepares the direct reading of objects into t (a struct of
// top-level fields of the kinds above); nil when t has a field it does
// not know.
func newRowReader(t reflect.Type) *rowReader {
	if t.NumField() > 64 {
		return nil
	}
	r := &rowReader{keys: map[string]rowKey{}}
	for i := range t.NumField() {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		kind := rowKinds[f.Type]
		if f.Anonymous || !f.IsExported() || name == "" || name == "-" || kind == 0 {
			return nil
		}
		r.keys[name] = rowKey{field: i, stored: name, kind: kind}
		q, ok := predict.LookupQuantity(name)
		if !ok || q.Name != name {
			continue
		}
		if kind != rowFloat && kind != rowFloatPtr {
			return nil
		}
		names := q.Spellings()
		for _, sp := range names[1:] {
			s, ok := q.Spelling(sp)
			if !ok || s.ToStored == nil {
				return nil
			}
			r.keys[sp] = rowKey{field: i, stored: name, kind: kind, toStored: s.ToStored}
		}
		// The rewrite requires a plain quantity with several spellings.
		if kind == rowFloat && len(names) > 1 {
			r.required |= 1 << i
		}
	}
	return r
}

// productionRows reads production records directly.
var productionRows = sync.OnceValue(func() *rowReader {
	return newRowReader(reflect.TypeOf(db.ProductionRecordData{}))
})

// read fills *d from the object b and reports whether the row is taken:
// read plainly and satisfying the validator. On false *d holds partial
// values; the caller reads the row again by the JSON path.
func (r *rowReader) read(s *Server, b []byte, d *db.ProductionRecordData) bool {
	if r == nil || !utf8.Valid(b) {
		return false
	}
	rv := reflect.ValueOf(d).Elem()
	var given uint64
	i := skipSpace(b, 0)
	if i >= len(b) || b[i] != '{' {
		return false
	}
	i = skipSpace(b, i+1)
	for {
		key, next, ok := plainString(b, i)
		if !ok {
			return false
		}
		k, known := r.keys[string(key)]
		if !known || given&(1<<k.field) != 0 {
			return false
		}
		given |= 1 << k.field
		i = skipSpace(b, next)
		if i >= len(b) || b[i] != ':' {
			return false
		}
		i = skipSpace(b, i+1)
		if i >= len(b) {
			return false
		}
		fv := rv.Field(k.field)
		if b[i] == '"' {
			v, next, ok := plainString(b, i)
			if !ok || !r.text(k, b[i:next], v, fv) {
				return false
			}
			i = next
		} else {
			end := i
			for end < len(b) && numberByte(b[end]) {
				end++
			}
			if !r.number(k, b[i:end], fv) {
				return false
			}
			i = end
		}
		i = skipSpace(b, i)
		if i >= len(b) {
			return false
		}
		if b[i] == '}' {
			i++
			break
		}
		if b[i] != ',' {
			return false
		}
		i = skipSpace(b, i+1)
	}
	if skipSpace(b, i) != len(b) || given&r.required != r.required {
		return false
	}
	return s.check(d) == nil
}

// text sets a string value (v, its quoted form q) into field fv of key k.
func (r *rowReader) text(k rowKey, q, v []byte, fv reflect.Value) bool {
	switch k.kind {
	case rowString:
		str := string(v)
		if textRefusal(k.stored, str) != "" {
			return false
		}
		fv.SetString(str)
	case rowUUID:
		if textRefusal(k.stored, string(v)) != "" {
			return false
		}
		var id uuid.UUID
		if id.UnmarshalText(v) != nil {
			return false
		}
		fv.Set(reflect.ValueOf(id))
	case rowTime:
		if textRefusal(k.stored, string(v)) != "" {
			return false
		}
		var t time.Time
		if t.UnmarshalJSON(q) != nil {
			return false
		}
		fv.Set(reflect.ValueOf(t))
	default:
		return false
	}
	return true
}

// number sets a JSON number n into field fv of key k.
func (r *rowReader) number(k rowKey, n []byte, fv reflect.Value) bool {
	if (k.kind != rowFloat && k.kind != rowFloatPtr) || !isJSONNumber(n) {
		return false
	}
	f, err := strconv.ParseFloat(string(n), 64)
	if err != nil {
		return false
	}
	if k.toStored != nil {
		// The rewrite marshals the converted number, which JSON cannot
		// write when it is not finite.
		if f = k.toStored(f); math.IsInf(f, 0) || math.IsNaN(f) {
			return false
		}
	}
	if k.kind == rowFloatPtr {
		fv.Set(reflect.ValueOf(&f))
	} else {
		fv.SetFloat(f)
	}
	return true
}

// skipSpace is the index of the first byte at or after i that is not JSON
// white space.
func skipSpace(b []byte, i int) int {
	for i < len(b) && (b[i] == ' ' || b[i] == '\t' || b[i] == '\n' || b[i] == '\r') {
		i++
	}
	return i
}

// plainString reads the JSON string starting at b[i] ('"') when it holds
// no escape and no control character: its contents and the index after its
// closing quote.
func plainString(b []byte, i int) ([]byte, int, bool) {
	if i >= len(b) || b[i] != '"' {
		return nil, 0, false
	}
	for j := i + 1; j < len(b); j++ {
		switch c := b[j]; {
		case c == '"':
			return b[i+1 : j], j + 1, true
		case c == '\\' || c < 0x20:
			return nil, 0, false
		}
	}
	return nil, 0, false
}

// numberByte reports a byte that may appear in a JSON number.
func numberByte(c byte) bool {
	return c >= '0' && c <= '9' || c == '-' || c == '+' || c == '.' || c == 'e' || c == 'E'
}

// isJSONNumber reports whether n is a number in JSON's grammar:
// -?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][-+]?[0-9]+)?
func isJSONNumber(n []byte) bool {
	i := 0
	if i < len(n) && n[i] == '-' {
		i++
	}
	switch {
	case i < len(n) && n[i] == '0':
		i++
	case i < len(n) && n[i] >= '1' && n[i] <= '9':
		for i < len(n) && n[i] >= '0' && n[i] <= '9' {
			i++
		}
	default:
		return false
	}
	digits := func() bool {
		start := i
		for i < len(n) && n[i] >= '0' && n[i] <= '9' {
			i++
		}
		return i > start
	}
	if i < len(n) && n[i] == '.' {
		i++
		if !digits() {
			return false
		}
	}
	if i < len(n) && (n[i] == 'e' || n[i] == 'E') {
		i++
		if i < len(n) && (n[i] == '+' || n[i] == '-') {
			i++
		}
		if !digits() {
			return false
		}
	}
	return i == len(n)
}
