package api

import (
	"encoding/json"
	"fmt"
	"reflect"
	"strings"
	"sync"

	"etchlog/predict"
)

// A quantity may arrive in any spelling the registry accepts for it
// (predict/quantity_table.go): thickness_mm or thickness_in, travel_speed_mm_s,
// travel_speed_mm_min or travel_speed_in_min, preheat_c or preheat_f...
// Before a body is decoded, storedSpellings rewrites every such field into
// its stored name and unit with the registry's exact conversion, so request
// types name stored quantities only and a new quantity needs no binding
// code. Stored and returned values are always in the stored units.

// storedSpellings rewrites a JSON object body for decoding into type t: each
// field of t named like a registered quantity takes the value given in any
// of its spellings, converted. A quantity given twice, or a required one
// (a plain, non-pointer number) given in none of its several spellings, is
// an issue. Lists of objects (a batch's records) are rewritten row by row.
// A body that is not a JSON object is returned unchanged for the decoder to
// judge.
// The returned sentAs records, by stored path, the spelling and number each
// rewritten quantity was sent in, so a refusal can be worded in them.
func storedSpellings(body []byte, t reflect.Type) ([]byte, []FieldIssue, sentAs) {
	if issues, ok := storedAsSent(body, t); ok {
		return body, issues, nil
	}
	return rewriteSpellings(body, t)
}

// rewriteSpellings is storedSpellings for any body, through a map of its fields.
func rewriteSpellings(body []byte, t reflect.Type) ([]byte, []FieldIssue, sentAs) {
	var obj map[string]json.RawMessage
	if t.Kind() != reflect.Struct || json.Unmarshal(body, &obj) != nil || obj == nil {
		return body, nil, nil
	}
	r := spellingRewriter{sent: sentAs{}}
	if !r.object(obj, t, "") {
		return body, r.issues, r.sent
	}
	out, err := json.Marshal(obj)
	if err != nil {
		return body, r.issues, r.sent
	}
	return out, r.issues, r.sent
}

// spellingRewriter collects the issues of one body and what it rewrote.
type spellingRewriter struct {
	issues []FieldIssue
	sent   sentAs
}

// object rewrites obj for struct type t, reporting whether anything changed.
func (r *spellingRewriter) object(obj map[string]json.RawMessage, t reflect.Type, prefix string) bool {
	changed := false
	for _, f := range jsonFields(t) {
		if q, ok := predict.LookupQuantity(f.name); ok && q.Name == f.name {
			changed = r.quantity(obj, q, f.typ, prefix) || changed
			continue
		}
		if inner := structOf(f.typ); inner != nil && obj[f.name] != nil {
			var o map[string]json.RawMessage
			if json.Unmarshal(obj[f.name], &o) == nil && o != nil && r.object(o, inner, prefix+f.name+".") {
				if b, err := json.Marshal(o); err == nil {
					obj[f.name], changed = b, true
				}
			}
			continue
		}
		row := f.typ
		if row.Kind() != reflect.Slice || row.Elem().Kind() != reflect.Struct || obj[f.name] == nil {
			continue
		}
		var rows []map[string]json.RawMessage
		if json.Unmarshal(obj[f.name], &rows) != nil {
			continue
		}
		rowsChanged := false
		for i, o := range rows {
			if o != nil && r.object(o, row.Elem(), fmt.Sprintf("%s%s[%d].", prefix, f.name, i)) {
				rowsChanged = true
			}
		}
		if rowsChanged {
			if b, err := json.Marshal(rows); err == nil {
				obj[f.name], changed = b, true
			}
		}
	}
	return changed
}

// quantity moves quantity q, given in any of its spellings, under its
// stored name; typ is the Go type of the stored field.
func (r *spellingRewriter) quantity(obj map[string]json.RawMessage, q predict.Quantity, typ reflect.Type, prefix string) bool {
	names := q.Spellings()
	var given []string
	for _, n := range names {
		if _, ok := obj[n]; ok {
			given = append(given, n)
		}
	}
	switch {
	case len(given) > 1:
		r.issues = append(r.issues, FieldIssue{prefix + given[1], "give this quantity once: " + prefix + given[0] + " is given too"})
		return false
	case len(given) == 0:
		if typ.Kind() != reflect.Pointer && len(names) > 1 {
			r.issues = append(r.issues, FieldIssue{prefix + names[0], "is required (as one of " + prefix + strings.Join(names, ", "+prefix) + ")"})
		}
		return false
	case given[0] == q.Name:
		return false
	}
	s, _ := q.Spelling(given[0])
	v, ok := convert(obj[given[0]], s.ToStored)
	if !ok {
		r.issues = append(r.issues, FieldIssue{prefix + given[0], "wrong type: want a number"})
		return false
	}
	var sent float64
	if json.Unmarshal(obj[given[0]], &sent) == nil {
		r.sent[prefix+q.Name] = sentValue{field: prefix + given[0], value: sent}
	}
	delete(obj, given[0])
	obj[q.Name] = v
	return true
}

// convert applies to to a number, or to both ends of a range {"min", "max"}
// (every registered conversion is increasing, so the order holds).
func convert(raw json.RawMessage, to func(float64) float64) (json.RawMessage, bool) {
	var v float64
	if json.Unmarshal(raw, &v) == nil {
		b, err := json.Marshal(to(v))
		return b, err == nil
	}
	var rng map[string]json.RawMessage
	if json.Unmarshal(raw, &rng) != nil || rng == nil {
		return nil, false
	}
	for _, end := range []string{"min", "max"} {
		if e, ok := rng[end]; ok {
			c, ok := convert(e, to)
			if !ok {
				return nil, false
			}
			rng[end] = c
		}
	}
	b, err := json.Marshal(rng)
	return b, err == nil
}

// structOf returns the struct type of a field that holds a nested object
// (directly or through a pointer), or nil.
func structOf(t reflect.Type) reflect.Type {
	if t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if t.Kind() == reflect.Struct {
		return t
	}
	return nil
}

// jsonField is one field of a struct as JSON sees it.
type jsonField struct {
	name string
	typ  reflect.Type
}

// jsonFieldsOf keeps jsonFields' answer per type: a body's rows, or an
// import's, ask for the same types again and again.
var jsonFieldsOf sync.Map // reflect.Type → []jsonField

// jsonFields lists t's JSON fields, those of embedded structs included. The
// list is shared: callers must not change it.
func jsonFields(t reflect.Type) []jsonField {
	if v, ok := jsonFieldsOf.Load(t); ok {
		return v.([]jsonField)
	}
	out := listJSONFields(t)
	jsonFieldsOf.Store(t, out)
	return out
}

// listJSONFields is jsonFields without the cache.
func listJSONFields(t reflect.Type) []jsonField {
	var out []jsonField
	for i := range t.NumField() {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		switch {
		case f.Anonymous && name == "" && f.Type.Kind() == reflect.Struct:
			out = append(out, listJSONFields(f.Type)...)
		case !f.IsExported() || name == "-":
		case name == "":
			out = append(out, jsonField{f.Name, f.Type})
		default:
			out = append(out, jsonField{name, f.Type})
		}
	}
	return out
}

// units collects the issues of a model request's own rules; prefix names
// the object they are in ("lesnewich.").
type units struct {
	prefix string
	issues []FieldIssue
}

// req returns a required quantity (bound already in its stored spelling),
// or 0 with an issue naming every spelling the registry accepts.
func (u *units) req(name string, v *float64) float64 {
	if v != nil {
		return *v
	}
	u.missing(name)
	return 0
}

// missing adds the issue of a required quantity given in none of its spellings.
func (u *units) missing(name string) {
	u.issues = append(u.issues, FieldIssue{u.prefix + name,
		"is required (as one of " + u.prefix + strings.Join(predict.MustQuantity(name).Spellings(), ", "+u.prefix) + ")"})
}

// err returns the collected issues as a 400 (they are about the request's shape).
func (u *units) err() error {
	if len(u.issues) == 0 {
		return nil
	}
	return &invalidError{status: 400, issues: u.issues}
}
