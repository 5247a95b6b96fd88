package api

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/labstack/echo/v4"

	"etchlog/db/logfmt"
)

// Numbers leave the server rounded to answerDigits significant digits, so a
// stored 9.524999999999999 mm (0.375 in × 25.4 in binary floating point)
// reads as 9.525. Stored values keep full precision; only the JSON text of
// an answer is rounded. Integers (no fraction or exponent) pass unchanged.
const answerDigits = 12

// Context keys set by conformTo and read by the serializer.
const (
	ctxUnits    = "etchlog.units"    // the operation's units parameter, when it has one
	ctxVerbatim = "etchlog.verbatim" // true: numbers exactly as stored (the audit chain's payloads)
)

// jsonAnswer is the server's echo.JSONSerializer: encoding/json, then each
// number rounded and, with units=inch-pound, each quantity in its inch-pound
// spelling (toInchPound).
type jsonAnswer struct{ echo.DefaultJSONSerializer }

// Serialize writes v as JSON the way encoding/json does (a trailing newline,
// indented when asked), with the numbers rewritten.
func (jsonAnswer) Serialize(c echo.Context, v any, indent string) error {
	b, err := json.Marshal(v)
	if err != nil {
		return err
	}
	if verbatim, _ := c.Get(ctxVerbatim).(bool); !verbatim {
		units, _ := c.Get(ctxUnits).(string)
		if b, err = rewriteAnswer(b, units == unitsInchPound); err != nil {
			return fmt.Errorf("api: rewrite answer: %w", err)
		}
	}
	if indent != "" {
		var out bytes.Buffer
		if err := json.Indent(&out, b, "", indent); err != nil {
			return err
		}
		b = out.Bytes()
	}
	if _, err := c.Response().Write(append(b, '\n')); err != nil {
		return err
	}
	return nil
}

// writeProblem writes a problem as every answer is written: numbers to
// answerDigits significant digits, metric (problems name fields as sent).
func writeProblem(w io.Writer, p any) error {
	b, err := json.Marshal(p)
	if err != nil {
		return err
	}
	if r, err := rewriteAnswer(b, false); err == nil {
		b = r
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// roundAnswer rounds v to answerDigits significant digits.
func roundAnswer(v float64) float64 {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v
	}
	var buf [32]byte
	r, err := strconv.ParseFloat(string(strconv.AppendFloat(buf[:0], v, 'g', answerDigits, 64)), 64)
	if err != nil {
		return v
	}
	return r
}

// rewriteAnswer re-encodes one JSON document member by member, keeping its
// order, with every non-integer number rounded and, when inch is set, the
// quantities converted.
func rewriteAnswer(doc []byte, inch bool) ([]byte, error) {
	if !inch {
		return roundNumbers(doc), nil
	}
	return rewriteTree(doc, inch)
}

// rewriteTree is rewriteAnswer through a tree of the document: needed when
// quantities are renamed and converted.
func rewriteTree(doc []byte, inch bool) ([]byte, error) {
	v, err := answerTree(doc, inch)
	if err != nil {
		return nil, err
	}
	var out bytes.Buffer
	writeValue(&out, v)
	return out.Bytes(), nil
}

// answerTree reads one JSON document into ordered objects, arrays and
// json.Numbers, its quantities converted when inch is set (numbers are
// rounded when written, by writeValue).
func answerTree(doc []byte, inch bool) (any, error) {
	dec := json.NewDecoder(bytes.NewReader(doc))
	dec.UseNumber()
	v, err := readValue(dec)
	if err != nil {
		return nil, err
	}
	if _, err := dec.Token(); err != io.EOF {
		return nil, fmt.Errorf("trailing data after the answer")
	}
	if inch {
		v = toInchPound(v)
	}
	return v, nil
}

// object is a JSON object with its members in order.
type object []member

type member struct {
	key string
	val any // object, []any, json.Number, float64, string, bool or nil
}

// get returns the member named key.
func (o object) get(key string) (any, bool) {
	for _, m := range o {
		if m.key == key {
			return m.val, true
		}
	}
	return nil, false
}

func readValue(dec *json.Decoder) (any, error) {
	tok, err := dec.Token()
	if err != nil {
		return nil, err
	}
	switch t := tok.(type) {
	case json.Delim:
		switch t {
		case '{':
			var o object
			for dec.More() {
				k, err := dec.Token()
				if err != nil {
					return nil, err
				}
				v, err := readValue(dec)
				if err != nil {
					return nil, err
				}
				o = append(o, member{k.(string), v})
			}
			_, err := dec.Token() // '}'
			return o, err
		case '[':
			a := []any{}
			for dec.More() {
				v, err := readValue(dec)
				if err != nil {
					return nil, err
				}
				a = append(a, v)
			}
			_, err := dec.Token() // ']'
			return a, err
		}
		return nil, fmt.Errorf("unexpected %v", t)
	default:
		return t, nil
	}
}

func writeValue(out *bytes.Buffer, v any) {
	switch t := v.(type) {
	case object:
		out.WriteByte('{')
		for i, m := range t {
			if i > 0 {
				out.WriteByte(',')
			}
			k, _ := json.Marshal(m.key)
			out.Write(k)
			out.WriteByte(':')
			writeValue(out, m.val)
		}
		out.WriteByte('}')
	case []any:
		out.WriteByte('[')
		for i, e := range t {
			if i > 0 {
				out.WriteByte(',')
			}
			writeValue(out, e)
		}
		out.WriteByte(']')
	case json.Number:
		writeNumber(out, string(t), 0, false)
	case float64:
		writeNumber(out, "", t, true)
	default:
		b, _ := json.Marshal(t) // string, bool or nil, escaped as encoding/json does
		out.Write(b)
	}
}

// writeNumber writes an integer literal as it came and any other number
// rounded, in encoding/json's float format.
func writeNumber(out *bytes.Buffer, lit string, f float64, isFloat bool) {
	var buf [32]byte
	out.Write(appendNumber(buf[:0], lit, f, isFloat))
}

// appendNumber is writeNumber appending to b.
func appendNumber(b []byte, lit string, f float64, isFloat bool) []byte {
	r := f
	if isFloat {
		r = roundAnswer(f)
	} else {
		if !strings.ContainsAny(lit, ".eE") {
			return append(b, lit...)
		}
		var err error
		if f, err = strconv.ParseFloat(lit, 64); err != nil {
			return append(b, lit...)
		}
		r = f
		if significantDigits(lit) > answerDigits {
			r = roundAnswer(f)
		}
	}
	if math.IsNaN(r) || math.IsInf(r, 0) { // never from encoding/json, which refuses them
		return append(b, lit...)
	}
	return logfmt.AppendJSONFloat(b, r)
}

// significantDigits counts the digits of a number literal's mantissa from
// its first non-zero one (trailing zeros counted). A literal of at most
// answerDigits of them needs no rounding: the double nearest it lies within
// half a unit in the last place (at most about 1.1e-16 of it) of its
// decimal, far inside half a unit of the answerDigits-th digit (at least
// 5e-13 of it), so rounding that double to answerDigits digits gives the
// same decimal back and reading that gives the same double (a subnormal
// double, spaced wider than that digit, reads back as itself whatever the
// rounding). TestShortLiteralsNeedNoRounding checks it. Most stored values
// are typed to a few digits: this spares them two of the four conversions.
func significantDigits[S string | []byte](lit S) int {
	n, lead := 0, true
	for i := 0; i < len(lit); i++ {
		switch c := lit[i]; {
		case c == 'e' || c == 'E':
			return n
		case c == '0' && lead:
		case c >= '0' && c <= '9':
			lead = false
			n++
		}
	}
	return n
}

// roundNumbers is rewriteAnswer without unit conversion, in one pass over
// the bytes of a document encoding/json wrote: every number outside a
// string that is not an integer is rewritten by appendNumber; the bytes
// between are copied in runs. Building the document's tree and writing it
// again cost a list page eight times what reading it from the database did.
func roundNumbers(doc []byte) []byte {
	out := make([]byte, 0, len(doc))
	copied := 0 // doc[:copied] is in out
	for i := 0; i < len(doc); i++ {
		switch c := doc[i]; {
		case c == '"':
			for i++; i < len(doc) && doc[i] != '"'; i++ {
				if doc[i] == '\\' {
					i++ // the escaped byte cannot end the string
				}
			}
		case c == '-' || c >= '0' && c <= '9':
			j := i + 1
			for j < len(doc) && (doc[j] >= '0' && doc[j] <= '9' || doc[j] == '.' || doc[j] == 'e' || doc[j] == 'E' || doc[j] == '+' || doc[j] == '-') {
				j++
			}
			if lit := doc[i:j]; bytes.ContainsAny(lit, ".eE") { // an integer passes unchanged
				out = appendNumber(append(out, doc[copied:i]...), string(lit), 0, false)
				copied = j
			}
			i = j - 1
		}
	}
	return append(out, doc[copied:]...)
}
