package api

import (
	"bytes"
	"encoding/json"
	"math"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/getkin/kin-openapi/openapi3"
)

// quickBody is an operation's JSON request body schema compiled once, when
// it is a flat object (scalar fields and lists of scalars, additional fields
// refused, required fields and "one of these spellings" groups): accepts
// reads a body in one pass over its bytes, building no value tree, and says
// yes only when the OpenAPI check (kin-openapi's decode and walk, which
// conformTo runs otherwise) would pass it too. Anything it is not sure of (an
// escape in a string, a null, an unknown field, a value out of bounds) it
// answers no, and the OpenAPI check walks the body and names the fault: the
// refusals and their wording stay the OpenAPI check's own.
// TestQuickBodyAgreesWithOpenAPICheck and FuzzQuickBody hold it to that.
type quickBody struct {
	media    *openapi3.MediaType // the operation's application/json entry
	content  openapi3.Content    // to resolve a request's Content-Type as the check does
	index    map[string]int      // field name → fields[i]
	fields   []quickField
	required uint64     // bit i: fields[i] must be present
	anyOf    [][]uint64 // each group: at least one of its sets all present
}

type quickKind int

const (
	quickString quickKind = iota
	quickNumber
	quickInteger
	quickBool
	quickList
)

type quickField struct {
	kind   quickKind
	schema *openapi3.Schema
	enum   []string
	item   *quickField // a list's items
}

// quickMaxFields is the most fields a compiled body may declare (one bit each).
const quickMaxFields = 64

// quickDocKeys are schema keywords that describe and never refuse.
var quickDocKeys = []string{"description", "title", "example", "deprecated", "externalDocs"}

// onlyKeys reports whether the schema, as the document states it, uses no
// keyword beyond keys, the documentation keywords and extensions (x-…): one
// the compiler does not know could refuse what it would accept.
func onlyKeys(s *openapi3.Schema, keys ...string) bool {
	raw, err := json.Marshal(s)
	if err != nil {
		return false
	}
	var m map[string]json.RawMessage
	if json.Unmarshal(raw, &m) != nil {
		return false
	}
	for k := range m {
		if !strings.HasPrefix(k, "x-") && !slices.Contains(keys, k) && !slices.Contains(quickDocKeys, k) {
			return false
		}
	}
	return true
}

// compileQuick compiles op's JSON request body, or answers nil when the
// operation takes none or its schema is beyond what quickBody checks.
func compileQuick(op *openapi3.Operation) *quickBody {
	if op.RequestBody == nil || op.RequestBody.Value == nil {
		return nil
	}
	content := op.RequestBody.Value.Content
	media := content.Get("application/json")
	if media == nil || media.Schema == nil || media.Schema.Value == nil || len(media.Encoding) > 0 {
		return nil
	}
	s := media.Schema.Value
	if !onlyKeys(s, "type", "properties", "required", "additionalProperties", "allOf") ||
		!s.Type.Is(openapi3.TypeObject) || s.AdditionalProperties.Has == nil || *s.AdditionalProperties.Has ||
		len(s.Properties) == 0 || len(s.Properties) > quickMaxFields {
		return nil
	}
	q := &quickBody{media: media, content: content, index: map[string]int{}}
	for name, ref := range s.Properties {
		if ref == nil || ref.Value == nil {
			return nil
		}
		f, ok := compileField(ref.Value, true)
		if !ok {
			return nil
		}
		q.index[name] = len(q.fields)
		q.fields = append(q.fields, f)
	}
	bits := func(names []string) (uint64, bool) {
		var b uint64
		for _, n := range names {
			i, ok := q.index[n]
			if !ok {
				return 0, false
			}
			b |= 1 << i
		}
		return b, true
	}
	var ok bool
	if q.required, ok = bits(s.Required); !ok {
		return nil
	}
	for _, all := range s.AllOf {
		if all.Value == nil || !onlyKeys(all.Value, "anyOf") || len(all.Value.AnyOf) == 0 {
			return nil
		}
		var group []uint64
		for _, any := range all.Value.AnyOf {
			if any.Value == nil || !onlyKeys(any.Value, "required") {
				return nil
			}
			b, ok := bits(any.Value.Required)
			if !ok {
				return nil
			}
			group = append(group, b)
		}
		q.anyOf = append(q.anyOf, group)
	}
	return q
}

// compileField compiles one field's schema: a string (enum, lengths,
// format), a number or integer (bounds), a boolean, or (when list) a list of
// such scalars.
func compileField(s *openapi3.Schema, list bool) (quickField, bool) {
	f := quickField{schema: s}
	switch {
	case s.Type.Is(openapi3.TypeString):
		if !onlyKeys(s, "type", "enum", "minLength", "maxLength", "format") {
			return f, false
		}
		f.kind = quickString
		for _, e := range s.Enum {
			v, ok := e.(string)
			if !ok {
				return f, false
			}
			f.enum = append(f.enum, v)
		}
	case s.Type.Is(openapi3.TypeNumber), s.Type.Is(openapi3.TypeInteger):
		if !onlyKeys(s, "type", "minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum") {
			return f, false
		}
		f.kind = quickNumber
		if s.Type.Is(openapi3.TypeInteger) {
			f.kind = quickInteger
		}
	case s.Type.Is(openapi3.TypeBoolean):
		if !onlyKeys(s, "type") {
			return f, false
		}
		f.kind = quickBool
	case list && s.Type.Is(openapi3.TypeArray):
		if !onlyKeys(s, "type", "items") || s.Items == nil || s.Items.Value == nil {
			return f, false
		}
		item, ok := compileField(s.Items.Value, false)
		if !ok {
			return f, false
		}
		f.kind, f.item = quickList, &item
	default:
		return f, false
	}
	return f, true
}

// accepts reports whether the OpenAPI check would pass body sent with
// Content-Type contentType; false means only that the check must decide.
func (q *quickBody) accepts(contentType string, body []byte) bool {
	if q.content.Get(contentType) != q.media {
		return false
	}
	mt, _, _ := strings.Cut(contentType, ";")
	if !strings.EqualFold(strings.TrimSpace(mt), "application/json") || !json.Valid(body) {
		return false // another media type would be decoded another way
	}
	r := quickReader{b: body}
	r.space()
	if !r.byte('{') {
		return false
	}
	var seen uint64
	r.space()
	if !r.byte('}') {
		for {
			r.space()
			name, ok := r.plainString()
			if !ok {
				return false
			}
			i, known := q.index[string(name)]
			if !known || seen&(1<<i) != 0 {
				return false // an unknown field is refused; a repeat is the check's to judge
			}
			seen |= 1 << i
			r.space()
			if !r.byte(':') {
				return false
			}
			r.space()
			if !q.fields[i].value(&r) {
				return false
			}
			r.space()
			if r.byte(',') {
				continue
			}
			if !r.byte('}') {
				return false
			}
			break
		}
	}
	if seen&q.required != q.required {
		return false
	}
	for _, group := range q.anyOf {
		met := false
		for _, need := range group {
			if seen&need == need {
				met = true
				break
			}
		}
		if !met {
			return false
		}
	}
	r.space()
	return r.i == len(r.b)
}

// value reads one value of field f and reports whether the check's walk
// would pass it (kin-openapi's visitJSON for these keywords).
func (f *quickField) value(r *quickReader) bool {
	switch f.kind {
	case quickString:
		b, ok := r.plainString()
		if !ok || !utf8.Valid(b) {
			return false
		}
		if len(f.enum) > 0 && !slices.Contains(f.enum, string(b)) {
			return false
		}
		s := f.schema
		if s.MinLength != 0 || s.MaxLength != nil {
			n := uint64(utf8.RuneCount(b)) // valid UTF-8 holds no surrogate: one unit per rune
			if n < s.MinLength || (s.MaxLength != nil && n > *s.MaxLength) {
				return false
			}
		}
		if s.Format != "" {
			if v, ok := openapi3.SchemaStringFormats[s.Format]; ok && v.Validate(string(b)) != nil {
				return false
			}
		}
		return true
	case quickNumber, quickInteger:
		tok := r.number()
		if len(tok) == 0 {
			return false
		}
		v, err := strconv.ParseFloat(string(tok), 64)
		if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
			return false
		}
		return f.inBounds(v)
	case quickBool:
		return r.literal("true") || r.literal("false")
	case quickList:
		if !r.byte('[') {
			return false
		}
		r.space()
		if r.byte(']') {
			return true
		}
		for {
			r.space()
			if !f.item.value(r) {
				return false
			}
			r.space()
			if r.byte(',') {
				continue
			}
			return r.byte(']')
		}
	}
	return false
}

// inBounds applies the integer, exclusive and inclusive bounds as the
// check's visitJSONNumber does (OpenAPI 3.0 and 3.1 forms of exclusivity).
func (f *quickField) inBounds(v float64) bool {
	s := f.schema
	if f.kind == quickInteger && v != math.Trunc(v) {
		return false
	}
	if eb := s.ExclusiveMin; eb.IsSet() {
		if eb.Value != nil && !(v > *eb.Value) {
			return false
		}
		if eb.Value == nil && eb.Bool != nil && *eb.Bool && s.Min != nil && !(v > *s.Min) {
			return false
		}
	}
	if eb := s.ExclusiveMax; eb.IsSet() {
		if eb.Value != nil && !(v < *eb.Value) {
			return false
		}
		if eb.Value == nil && eb.Bool != nil && *eb.Bool && s.Max != nil && !(v < *s.Max) {
			return false
		}
	}
	if s.Min != nil && !(*s.Min <= v) {
		return false
	}
	if s.Max != nil && !(*s.Max >= v) {
		return false
	}
	return true
}

// quickReader reads a body json.Valid has passed.
type quickReader struct {
	b []byte
	i int
}

func (r *quickReader) space() { r.i = skipSpace(r.b, r.i) }

func (r *quickReader) byte(c byte) bool {
	if r.i < len(r.b) && r.b[r.i] == c {
		r.i++
		return true
	}
	return false
}

func (r *quickReader) literal(s string) bool {
	if bytes.HasPrefix(r.b[r.i:], []byte(s)) {
		r.i += len(s)
		return true
	}
	return false
}

// plainString reads a string holding no escape sequence (the package's
// plainString) and answers its bytes; an escape answers false.
func (r *quickReader) plainString() ([]byte, bool) {
	v, next, ok := plainString(r.b, r.i)
	if ok {
		r.i = next
	}
	return v, ok
}

// number reads a number's characters (json.Valid has checked its form).
func (r *quickReader) number() []byte {
	start := r.i
	for r.i < len(r.b) && numberByte(r.b[r.i]) {
		r.i++
	}
	return r.b[start:r.i]
}
