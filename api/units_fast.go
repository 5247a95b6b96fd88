package api

import (
	"encoding/json"
	"reflect"
	"slices"
	"strings"
	"sync"

	"etchlog/predict"
)

// Most bodies give every quantity in its stored spelling: storedSpellings
// then rewrites nothing, and its answer follows from the body's field names
// alone. storedAsSent gives that answer from the names, read in place,
// without decoding the body into a map.

// spellingPlan is what storedAsSent needs of a struct type: its quantity
// fields in jsonFields' order, every other spelling of them, and its fields
// that may hold objects (a nested struct, rows of structs), which only the
// full rewrite looks into.
type spellingPlan struct {
	quantities []plannedQuantity
	others     map[string]bool
	nested     map[string]bool
}

// plannedQuantity is one quantity field: its spellings, stored one first,
// and whether leaving all of them out is an issue (a plain number with
// several spellings, as spellingRewriter.quantity decides).
type plannedQuantity struct {
	names    []string
	required bool
}

var spellingPlans sync.Map // reflect.Type → *spellingPlan

func planOf(t reflect.Type) *spellingPlan {
	if p, ok := spellingPlans.Load(t); ok {
		return p.(*spellingPlan)
	}
	p := &spellingPlan{others: map[string]bool{}, nested: map[string]bool{}}
	for _, f := range jsonFields(t) {
		if q, ok := predict.LookupQuantity(f.name); ok && q.Name == f.name {
			names := q.Spellings()
			p.quantities = append(p.quantities, plannedQuantity{names, f.typ.Kind() != reflect.Pointer && len(names) > 1})
			for _, n := range names[1:] {
				p.others[n] = true
			}
			continue
		}
		row := f.typ
		if structOf(f.typ) != nil || (row.Kind() == reflect.Slice && row.Elem().Kind() == reflect.Struct) {
			p.nested[f.name] = true
		}
	}
	spellingPlans.Store(t, p)
	return p
}

// storedAsSent returns storedSpellings' issues for a body that needs no
// rewriting into struct type t: a JSON object whose field names hold no
// escape, none of which is another spelling of a quantity of t, and none of
// t's fields that may hold objects holds an object or array. ok is false
// for any other body.
func storedAsSent(body []byte, t reflect.Type) (issues []FieldIssue, ok bool) {
	if t.Kind() != reflect.Struct {
		return nil, false
	}
	p := planOf(t)
	if !json.Valid(body) {
		return nil, false
	}
	var keyArr [32][]byte // a body's fields fit: nothing allocated
	var firstArr [32]byte
	keys, firsts, ok := objectKeys(body, keyArr[:0], firstArr[:0])
	if !ok {
		return nil, false
	}
	for i, k := range keys {
		if p.others[string(k)] || (p.nested[string(k)] && (firsts[i] == '{' || firsts[i] == '[')) {
			return nil, false
		}
	}
	for _, q := range p.quantities {
		if q.required && !slices.ContainsFunc(keys, func(k []byte) bool { return string(k) == q.names[0] }) {
			issues = append(issues, FieldIssue{q.names[0], "is required (as one of " + strings.Join(q.names, ", ") + ")"})
		}
	}
	return issues, true
}

// objectKeys appends to keys the field names of body, a JSON object
// json.Valid accepted, and to firsts the first byte of each value (ok false
// for another value, or a name with an escape).
func objectKeys(body []byte, keys [][]byte, firsts []byte) ([][]byte, []byte, bool) {
	i := skipSpace(body, 0)
	if body[i] != '{' {
		return nil, nil, false
	}
	i = skipSpace(body, i+1)
	for body[i] != '}' {
		end := i + 1
		for body[end] != '"' {
			if body[end] == '\\' {
				return nil, nil, false
			}
			end++
		}
		keys = append(keys, body[i+1:end])
		i = skipSpace(body, skipSpace(body, end+1)+1) // after ':'
		firsts = append(firsts, body[i])
		i = skipSpace(body, skipValue(body, i))
		if body[i] == ',' {
			i = skipSpace(body, i+1)
		}
	}
	return keys, firsts, true
}

// skipValue returns the index just after the valid JSON value at b[i].
func skipValue(b []byte, i int) int {
	depth := 0
	for {
		switch c := b[i]; {
		case c == '"':
			i++
			for b[i] != '"' {
				if b[i] == '\\' {
					i++
				}
				i++
			}
			i++
		case c == '{' || c == '[':
			depth++
			i++
		case c == '}' || c == ']':
			depth--
			i++
		default: // a number, a literal, white space, ',' or ':' inside a container
			i++
			for depth == 0 && i < len(b) && !jsonDelimiter(b[i]) {
				i++
			}
		}
		if depth == 0 {
			return i
		}
	}
}
