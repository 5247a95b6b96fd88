package api

import (
	"bytes"
	"encoding"
	"encoding/json"
	"reflect"
	"slices"
	"strings"
	"time"

	"etchlog/predict"
)

// A list answered as CSV (format=csv) has one column per member of the
// JSON item, in the order the JSON answer writes them. A nested object
// (a record's sign_off, a calibration's fit) is spread over columns named
// by the path to each member (sign_off.signed_by); an array, or an object
// whose members are not fixed (a band, a payload), is one column holding
// its JSON text. A number column whose field name states a unit carries
// the unit in its header ("current_a (A)", "travel_speed_in_min (in/min)");
// the value, bounds and excess of a flag are in the unit its own unit
// column names, and their headers say so.

// csvColumn is one CSV column: the JSON member names from the item down to
// the value, and the header.
type csvColumn struct {
	path   []string
	header string
}

// rowLabel is the header suffix of a number given in the unit its row names.
const rowLabel = " (in the row's unit)"

// unitLabelledMembers are the members of an object with a unit member
// (a flag) that are given in that unit (see unitLabelled).
var unitLabelledMembers = []string{"value", "min", "max", "excess"}

// csvColumns lists the columns of items of type t, with inch-pound names
// when inch is set, the way toInchPound renames the JSON answer.
func csvColumns(t reflect.Type, inch bool) []csvColumn {
	var out []csvColumn
	seen := map[string]bool{}
	walkColumns(t, nil, inch, &out, seen)
	return out
}

func walkColumns(t reflect.Type, prefix []string, inch bool, out *[]csvColumn, seen map[string]bool) {
	t = deref(t)
	labelled := hasJSONMember(t, "unit")
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		ft := deref(f.Type)
		if !f.IsExported() || name == "-" {
			continue
		}
		if f.Anonymous && name == "" && ft.Kind() == reflect.Struct {
			walkColumns(ft, prefix, inch, out, seen)
			continue
		}
		if name == "" {
			name = f.Name
		}
		key := name
		if s, ok := spellingOf(name); ok && inch {
			key = s.inchName(name)
		}
		path := append(slices.Clone(prefix), key)
		if ft.Kind() == reflect.Struct && !jsonLeaf(ft) {
			walkColumns(ft, path, inch, out, seen)
			continue
		}
		header := strings.Join(path, ".")
		if seen[header] { // a metric field whose inch-pound twin is already a column
			continue
		}
		seen[header] = true
		if numberKind(ft) {
			if labelled && slices.Contains(unitLabelledMembers, name) {
				header += rowLabel
			} else if u, ok := predict.FieldUnit(key); ok {
				header += " (" + u + ")"
			}
		}
		*out = append(*out, csvColumn{path: path, header: header})
	}
}

func deref(t reflect.Type) reflect.Type {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	return t
}

var (
	jsonMarshaler = reflect.TypeFor[json.Marshaler]()
	textMarshaler = reflect.TypeFor[encoding.TextMarshaler]()
)

// jsonLeaf reports whether a struct type writes itself (a date, a time, an
// id, a band): one column, not one per field.
func jsonLeaf(t reflect.Type) bool {
	p := reflect.PointerTo(t)
	return t == reflect.TypeFor[time.Time]() || t.Implements(jsonMarshaler) || p.Implements(jsonMarshaler) ||
		t.Implements(textMarshaler) || p.Implements(textMarshaler)
}

func numberKind(t reflect.Type) bool {
	switch t.Kind() {
	case reflect.Float32, reflect.Float64, reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64,
		reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		return true
	}
	return false
}

// hasJSONMember reports whether struct t writes a member named name.
func hasJSONMember(t reflect.Type, name string) bool {
	for i := 0; i < t.NumField(); i++ {
		if n, _, _ := strings.Cut(t.Field(i).Tag.Get("json"), ","); n == name {
			return true
		}
	}
	return false
}

// csvCells turns one item, read as the JSON answer writes it (answerTree),
// into the cells of cols. With sheet set, text that a spreadsheet would
// run as a formula gets a leading apostrophe.
func csvCells(item any, cols []csvColumn, sheet bool, cells []string) []string {
	cells = cells[:0]
	for _, col := range cols {
		v := item
		for _, k := range col.path {
			o, ok := v.(object)
			if !ok {
				v = nil
				break
			}
			v, _ = o.get(k)
		}
		cells = append(cells, cellText(v, sheet))
	}
	return cells
}

// cellText writes one value: text as it is, numbers as the JSON answer
// writes them, true/false, an empty cell for null or absent, and the JSON
// text of an array or object.
func cellText(v any, sheet bool) string {
	switch t := v.(type) {
	case nil:
		return ""
	case string:
		if sheet && t != "" && strings.ContainsRune("=+-@\t\r", rune(t[0])) {
			return "'" + t
		}
		return t
	case bool:
		if t {
			return "true"
		}
		return "false"
	}
	var b bytes.Buffer
	writeValue(&b, v)
	return b.String()
}
