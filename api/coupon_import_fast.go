package api

import (
	"math"
	"reflect"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/predict"
)

// Most rows of an import are good. Reading a row as a JSON body (read:
// every cell marshalled, rewritten into its stored spelling, unmarshalled)
// costs more than the rest of the import's work in Go, so a row is first
// read directly: each cell parsed as the JSON decode would parse it, a
// quantity converted by the same function as the spelling rewrite, and the
// struct checked by the same validator (Server.check). Only when all of
// that finds nothing is the row taken; a row with anything to say (a cell
// that does not parse as plainly as this path knows, a value the rewrite or
// the validator would refuse) is read again by read, which words every
// fault. So the rules and the words are read's; this path only decides
// that there is nothing to word. TestImportFastReadMatches compares the two
// on every cell of a varied file.

// fastKind is a field type the direct reading knows.
type fastKind int

const (
	fastString fastKind = iota + 1
	fastStringPtr
	fastFloat
	fastFloatPtr
	fastInt
	fastDate
	fastUUIDPtr
)

var fastKinds = map[reflect.Type]fastKind{
	reflect.TypeOf(""): fastString, reflect.TypeOf((*string)(nil)): fastStringPtr,
	reflect.TypeOf(0.0): fastFloat, reflect.TypeOf((*float64)(nil)): fastFloatPtr,
	reflect.TypeOf(0): fastInt, reflect.TypeOf(db.Date{}): fastDate,
	reflect.TypeOf((*uuid.UUID)(nil)): fastUUIDPtr,
}

// fastCell is how one column's cells fill their field directly.
type fastCell struct {
	col      int                   // the column's place in the row
	stored   string                // the field's stored name
	field    int                   // the field's index in the struct
	kind     fastKind              // its type
	toStored func(float64) float64 // the spelling's conversion (nil: stored spelling)
}

// fastReader reads one side of a row (the coupon's columns or a
// section's) directly; nil when the header rules it out for that side (a
// column of a type it does not know, a quantity given by two columns, a
// quantity the rewrite requires with no column: read words each).
type fastReader struct {
	cells    []fastCell
	required []int // columns whose cell must be given (the rewrite requires them)
}

// newFastReader prepares the direct reading of the columns of one side of
// the header into a struct of type t.
func newFastReader(im *importColumns, t reflect.Type, section bool) *fastReader {
	fields := fieldsByName(t)
	r := &fastReader{}
	given := map[string]int{}
	for j, c := range im.cols {
		if c.section != section {
			continue
		}
		f, ok := fields[c.stored]
		kind := fastKinds[f.typ]
		if !ok || kind == 0 {
			return nil
		}
		if _, twice := given[c.stored]; twice {
			return nil
		}
		given[c.stored] = j
		cell := fastCell{col: j, stored: c.stored, field: f.index, kind: kind}
		if c.name != c.stored {
			q, ok := predict.LookupQuantity(c.name)
			if !ok {
				return nil
			}
			s, ok := q.Spelling(c.name)
			if !ok || s.ToStored == nil {
				return nil
			}
			cell.toStored = s.ToStored
		}
		r.cells = append(r.cells, cell)
	}
	// The rewrite requires a plain (non-pointer) quantity with several
	// spellings: its cell must be given, or read words it.
	for _, f := range jsonFields(t) {
		q, ok := predict.LookupQuantity(f.name)
		if !ok || q.Name != f.name || f.typ.Kind() == reflect.Pointer || len(q.Spellings()) < 2 {
			continue
		}
		j, ok := given[f.name]
		if !ok {
			return nil
		}
		r.required = append(r.required, j)
	}
	return r
}

// read fills v (a pointer to the struct) from the row and reports whether
// the row is taken: every cell read plainly and the validator satisfied.
// On false v holds partial values; the caller reads the row again with read.
func (r *fastReader) read(s *Server, rec []string, v any) bool {
	if r == nil {
		return false
	}
	for _, j := range r.required {
		if rec[j] == "" {
			return false
		}
	}
	rv := reflect.ValueOf(v).Elem()
	for _, c := range r.cells {
		cell := rec[c.col]
		if cell == "" {
			continue
		}
		if !utf8.ValidString(cell) || textRefusal(c.stored, cell) != "" {
			return false
		}
		fv := rv.Field(c.field)
		switch c.kind {
		case fastString:
			fv.SetString(cell)
		case fastStringPtr:
			fv.Set(reflect.ValueOf(&cell))
		case fastDate:
			d, err := db.ParseDate(cell)
			if err != nil {
				return false
			}
			fv.Set(reflect.ValueOf(d))
		case fastUUIDPtr:
			var id uuid.UUID
			if id.UnmarshalText([]byte(cell)) != nil {
				return false
			}
			fv.Set(reflect.ValueOf(&id))
		default:
			f, err := strconv.ParseFloat(strings.TrimSpace(cell), 64)
			if err != nil || math.IsInf(f, 0) || math.IsNaN(f) {
				return false
			}
			if c.toStored != nil {
				if f = c.toStored(f); math.IsInf(f, 0) || math.IsNaN(f) {
					return false
				}
			}
			switch c.kind {
			case fastFloat:
				fv.SetFloat(f)
			case fastFloatPtr:
				fv.Set(reflect.ValueOf(&f))
			case fastInt:
				// A whole number JSON writes without an exponent (below 1e21)
				// and int holds.
				if f != math.Trunc(f) || math.Abs(f) >= 1<<53 {
					return false
				}
				fv.SetInt(int64(f))
			}
		}
	}
	return s.check(rv.Interface()) == nil
}
