package lab

import (
	"bytes"
	"encoding/json"
	"fmt"
	"strings"

	"etchlog/predict"
)

// A record's history is its revisions, oldest first, as the API answers
// GET .../revisions. Each revision after the first is shown as what it
// changed, field by field, with who, when and why.

// FieldChange is one field whose value differs between two revisions, in
// words and in the display units: Old → New.
type FieldChange struct {
	Field, Label string
	Old, New     string
}

// bookkeeping are the members of a revision that say who wrote it, when
// and why, or that the server derives (its sign-off, what a coupon takes
// from its procedure): not part of what was changed.
var bookkeeping = map[string]bool{
	"site": true, "id": true, "revision": true, "created_at": true, "created_by": true, "reason": true,
	"sign_off": true, "inherited": true,
}

// member is one member of a JSON object, in the object's order.
type member struct {
	Key string
	Val json.RawMessage
}

// members reads a JSON object's members in order.
func members(doc json.RawMessage) ([]member, error) {
	dec := json.NewDecoder(bytes.NewReader(doc))
	if t, err := dec.Token(); err != nil || t != json.Delim('{') {
		return nil, fmt.Errorf("lab: a revision is not a JSON object")
	}
	var out []member
	for dec.More() {
		k, err := dec.Token()
		if err != nil {
			return nil, err
		}
		var v json.RawMessage
		if err := dec.Decode(&v); err != nil {
			return nil, err
		}
		out = append(out, member{Key: k.(string), Val: v})
	}
	return out, nil
}

// Diff lists the fields that differ from revision old to revision new
// (JSON objects as the API answers them, in stored units), in the order new
// writes them and then any field only old had; bookkeeping is left out.
// Numbers are compared by value, so 180 and 180.0 are the same.
func Diff(u Units, old, new json.RawMessage) ([]FieldChange, error) {
	om, err := members(old)
	if err != nil {
		return nil, err
	}
	nm, err := members(new)
	if err != nil {
		return nil, err
	}
	before := map[string]json.RawMessage{}
	for _, m := range om {
		before[m.Key] = m.Val
	}
	var out []FieldChange
	seen := map[string]bool{}
	add := func(key string, o, n json.RawMessage) {
		seen[key] = true
		if bookkeeping[key] || sameJSON(o, n) {
			return
		}
		out = append(out, FieldChange{Field: key, Label: VariableLabel(key), Old: valueWords(u, key, o), New: valueWords(u, key, n)})
	}
	for _, m := range nm {
		add(m.Key, before[m.Key], m.Val)
	}
	for _, m := range om {
		if !seen[m.Key] {
			add(m.Key, m.Val, nil)
		}
	}
	return out, nil
}

// sameJSON compares two JSON values by meaning: absent and null alike,
// numbers by value, objects whatever their member order.
func sameJSON(a, b json.RawMessage) bool {
	var x, y any
	if err := decodeNumbers(a, &x); err != nil {
		return false
	}
	if err := decodeNumbers(b, &y); err != nil {
		return false
	}
	return fmt.Sprint(normal(x)) == fmt.Sprint(normal(y))
}

// decodeNumbers decodes JSON (nothing is null) keeping numbers as json.Number.
func decodeNumbers(raw json.RawMessage, v *any) error {
	if len(bytes.TrimSpace(raw)) == 0 {
		*v = nil
		return nil
	}
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	return dec.Decode(v)
}

// normal turns numbers into float64 values, so fmt prints equal numbers alike
// (fmt prints maps with sorted keys).
func normal(v any) any {
	switch t := v.(type) {
	case json.Number:
		f, err := t.Float64()
		if err != nil {
			return t.String()
		}
		return f
	case []any:
		for i := range t {
			t[i] = normal(t[i])
		}
	case map[string]any:
		for k := range t {
			t[k] = normal(t[k])
		}
	}
	return v
}

// valueWords writes one field's value for a reader: a quantity in units u
// with its unit, yes/no, text as it is, a list joined by commas, and "not
// recorded" for an absent or null value.
func valueWords(u Units, key string, raw json.RawMessage) string {
	var v any
	if err := decodeNumbers(raw, &v); err != nil {
		return string(raw)
	}
	switch t := v.(type) {
	case nil:
		return "not recorded"
	case bool:
		if t {
			return "yes"
		}
		return "no"
	case string:
		if t == "" {
			return "blank"
		}
		return t
	case json.Number:
		if _, ok := predict.LookupQuantity(key); ok {
			return FormatQuantity(u, key, t)
		}
		return t.String()
	case []any:
		parts := make([]string, len(t))
		for i, x := range t {
			parts[i] = fmt.Sprint(x)
		}
		if len(parts) == 0 {
			return "none"
		}
		return strings.Join(parts, ", ")
	}
	return string(bytes.TrimSpace(raw))
}
