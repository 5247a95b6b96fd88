package logfmt

import (
	"bytes"
	"encoding/json"
	"math/rand/v2"
	"testing"
)

// TestAppendJSONMatchesEncodingJSON checks the hand-written leaf encoder
// byte for byte against the standard library's encoding/json (the reference
// the export's readers decode with) on random leaves whose strings hold
// every ASCII byte, multi-byte UTF-8, U+2028/U+2029 and invalid UTF-8.
func TestAppendJSONMatchesEncodingJSON(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 5))
	pieces := []string{"a", "Z", "9", " ", "é", "ü", "漢", "😀", "\u2028", "\u2029", "\xff", "\xe2\x80", "\xed\xa0\x80", "<", ">", "&", `"`, `\`, "/"}
	for c := range 0x80 {
		pieces = append(pieces, string(rune(c)))
	}
	str := func() string {
		var s string
		for range rng.IntN(12) {
			s += pieces[rng.IntN(len(pieces))]
		}
		return s
	}
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
