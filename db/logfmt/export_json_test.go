package logfmt

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"
)

// TestAppendJSONMatchesEncodingJSON checks the hand-written leaf encoder
// byte for byte against the standard library's encoding/json (the reference
// the export's readers decode with) on random leaves whose strings hold
// every ASCII byte, multi-byte UTF-8, U+2028/U+2029 and invalid UTF-8.
func TestAppendJSONMatchesEncodingJSON(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 5))
	str := randomText(rng, 12, "ü", "\u2029", "\xed\xa0\x80", ">")
	for i := range 3000 {
		l := ExportLeaf{Index: rng.Uint64() >> rng.IntN(64), Kind: str(), Version: rng.IntN(5) - 1, RecordID: str(),
			Revision: rng.IntN(1000), Actor: str(), Action: str(), Reason: str(), At: str()}
		if i%7 != 0 {
			l.LeafHash = make([]byte, rng.IntN(40))
			for j := range l.LeafHash {
				l.LeafHash[j] = byte(rng.Uint32())
			}
		}
		if i%5 == 0 {
			l.Missing = str()
		} else if i%11 != 0 {
			l.Fields = []Field{}
			for range rng.IntN(6) {
				l.Fields = append(l.Fields, Field{Name: str(), Value: str(), Null: rng.IntN(4) == 0})
			}
		}
		for j := range l.Fields {
			if l.Fields[j].Null {
				l.Fields[j].Value = ""
			}
		}
		want, err := json.Marshal(l)
		if err != nil {
			t.Fatal(err)
		}
		if got := l.AppendJSON(nil); !bytes.Equal(got, want) {
			t.Fatalf("leaf %+v:\n got %s\nwant %s", l, got, want)
		}
	}
}

// TestFieldDecodeMatchesEncodingJSON checks a field's decoding (plain pairs
// read from their bytes) against encoding/json's decoding of the same pair
// into two string pointers, the reference, on random names and values
// holding every ASCII byte, multi-byte UTF-8 and invalid UTF-8, written by
// encoding/json and by hand with escapes and white space; and that a field
// list decodes within a leaf as it does alone.
func TestFieldDecodeMatchesEncodingJSON(t *testing.T) {
	rng := rand.New(rand.NewPCG(29, 3))
	str := randomText(rng, 8, "null")
	space := func() string { return []string{"", "", " ", "\n", "\t ", "\r\n"}[rng.IntN(6)] }
	quoted := func(s string) string {
		q, err := json.Marshal(s)
		if err != nil {
			t.Fatal(err)
		}
		if rng.IntN(3) == 0 && strings.IndexFunc(s, func(r rune) bool { return r != 'a' }) < 0 {
			return `"` + strings.ReplaceAll(s, "a", `\u0061`) + `"` // an escape for a plain letter
		}
		if rng.IntN(2) == 0 && !strings.ContainsAny(s, "\"\\") && strings.IndexFunc(s, func(r rune) bool { return r < 0x20 }) < 0 {
			return `"` + s + `"` // as written, invalid UTF-8 and all (encoding/json writes U+FFFD)
		}
		return string(q)
	}
	for range 20000 {
		name, value := quoted(str()), quoted(str())
		if rng.IntN(4) == 0 {
			value = "null"
		}
		var raw string
		switch rng.IntN(6) {
		case 0:
			raw = "[" + name + "]" // not a pair
		case 1:
			raw = "[null," + value + "]"
		case 2:
			raw = "[" + name + "," + value + "," + value + "]"
		default:
			raw = space() + "[" + space() + name + space() + "," + space() + value + space() + "]" + space()
		}
		if !json.Valid([]byte(raw)) {
			t.Fatalf("the test wrote invalid JSON %q", raw)
		}
		var pair []*string
		refErr := json.Unmarshal([]byte(raw), &pair)
		if refErr == nil && (len(pair) != 2 || pair[0] == nil) {
			refErr = errors.New("not a pair")
		}
		var got Field
		err := got.UnmarshalJSON([]byte(raw))
		if (err != nil) != (refErr != nil) {
			t.Fatalf("%q: error %v, encoding/json %v", raw, err, refErr)
		}
		if err != nil {
			continue
		}
		want := Field{Name: *pair[0], Null: pair[1] == nil}
		if pair[1] != nil {
			want.Value = *pair[1]
		}
		if got != want {
			t.Fatalf("%q: got %+v, encoding/json %+v", raw, got, want)
		}
		var leaf ExportLeaf
		if err := json.Unmarshal([]byte(`{"fields":[`+raw+`,`+raw+`]}`), &leaf); err != nil || len(leaf.Fields) != 2 || leaf.Fields[1] != want {
			t.Fatalf("%q within a leaf: %+v %v", raw, leaf.Fields, err)
		}
	}
}

// wholeLine decodes an export line as the verifier reads any line: the
// line, then its record when it is a leaf's.
func wholeLine(b []byte) (ExportLeaf, bool) {
	var line struct {
		Kind   string          `json:"kind"`
		Record json.RawMessage `json:"record"`
	}
	var l ExportLeaf
	if json.Unmarshal(b, &line) != nil || line.Kind != LineLeaf || json.Unmarshal(line.Record, &l) != nil {
		return ExportLeaf{}, false
	}
	return l, true
}

// TestLeafLineMatchesWholeLine checks the verifier's one-pass read of a
// leaf line against reading the whole line: on leaf lines as the export
// writes them it must read every one, and on lines changed around their
// record (another kind, a key after the record, white space, a broken or
// trailing value) it may decline but must never read a line differently.
func TestLeafLineMatchesWholeLine(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 7))
	for i := range 3000 {
		l := ExportLeaf{Index: uint64(i), Kind: "coupon", Version: 1 + i%2, RecordID: fmt.Sprint("r-", i), Revision: i % 4,
			Fields:   []Field{{Name: "a", Value: fmt.Sprint(i)}, {Name: "b", Null: true}, {Name: "c\"\\", Value: "é\u2028"}},
			LeafHash: bytes.Repeat([]byte{byte(i)}, 32), Actor: "ines", Action: "create", At: "2026-11-05T08:00:01.000000Z"}
		rec := l.AppendJSON(nil)
		line := append([]byte(leafLinePrefix), rec...)
		line = append(line, '}')
		got, ok := leafLine(line)
		if want, wok := wholeLine(line); !ok || !wok || !reflect.DeepEqual(got, want) {
			t.Fatalf("leaf line %s: one pass %v %+v, whole %v %+v", line, ok, got, wok, want)
		}
		variants := []string{
			`{"kind":"leaf","record":` + string(rec) + `,"kind":"unlogged"}`,
			`{"kind":"leaf","record":` + string(rec) + `,"record":{}}`,
			`{"kind":"leaf","record":` + string(rec) + ` }`,
			`{"kind":"leaf","record": ` + string(rec) + `}`,
			`{"kind":"leaf","record":` + string(rec) + `}}`,
			`{"kind":"leaf","record":` + string(rec[:len(rec)-1]) + `}`,
			`{"kind":"leaf","record":null}`,
			`{"kind":"leaf","record":1,"kind":"error","record":2}`,
			`{"kind":"leaf","record":` + string(rec) + `,"x":1}`,
			`{"kind":"leafy","record":` + string(rec) + `}`,
			`{"kind":"leaf","record":{"index":-1}}`,
		}
		v := variants[rng.IntN(len(variants))]
		if got, ok := leafLine([]byte(v)); ok {
			if want, wok := wholeLine([]byte(v)); !wok || !reflect.DeepEqual(got, want) {
				t.Fatalf("line %s: one pass read %+v, whole %v %+v", v, got, wok, want)
			}
		}
	}
}

// FuzzLeafLine holds the one-pass read of a leaf line to the whole line's
// read on any bytes: when it reads a line, reading the whole line gives the
// same leaf.
func FuzzLeafLine(f *testing.F) {
	f.Add([]byte(`{"kind":"leaf","record":{"index":3,"fact_kind":"coupon","fields":[["a","1"]],"leaf_hash":"AAAA"}}`))
	f.Add([]byte(`{"kind":"leaf","record":{"index":3},"kind":"export"}`))
	f.Add([]byte(`{"kind":"leaf","record":null}`))
	f.Fuzz(func(t *testing.T, b []byte) {
		got, ok := leafLine(b)
		if !ok {
			return
		}
		if want, wok := wholeLine(b); !wok || !reflect.DeepEqual(got, want) {
			t.Fatalf("line %q: one pass read %+v, whole %v %+v", b, got, wok, want)
		}
	})
}

// randomText returns a maker of random strings of up to most-1 pieces: every
// ASCII character, multi-byte UTF-8, U+2028, invalid UTF-8, the JSON
// specials, and the extra pieces given.
func randomText(rng *rand.Rand, most int, extra ...string) func() string {
	pieces := append([]string{"a", "Z", "9", " ", "é", "漢", "😀", "\u2028", "\xff", "\xe2\x80", "<", "&", `"`, `\`, "/"}, extra...)
	for c := range 0x80 {
		pieces = append(pieces, string(rune(c)))
	}
	return func() string {
		var s string
		for range rng.IntN(most) {
			s += pieces[rng.IntN(len(pieces))]
		}
		return s
	}
}
