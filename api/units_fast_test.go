package api

import (
	"bytes"
	"reflect"
	"testing"

	"github.com/google/go-cmp/cmp"

	"etchlog/db"
)

// spellingTypes are request types of every shape storedSpellings meets:
// flat with required and optional quantities, rows of objects, a nested
// object.
var spellingTypes = []reflect.Type{
	reflect.TypeFor[couponIn](), reflect.TypeFor[measurementIn](), reflect.TypeFor[db.ProductionRecordData](),
	reflect.TypeFor[couponPlanIn](), reflect.TypeFor[calibrationIn](), reflect.TypeFor[holdIn](),
}

// spellingBodies give quantities in stored and other spellings, both at
// once, none, as strings, ranges and rows, with escapes in names and
// values, and bodies that are not objects.
var spellingBodies = []string{
	`{"thickness_mm":6,"current_a":200,"notes":"a \"b\" c"}`,
	`{"thickness_in":0.25,"current_a":200}`, `{"thickness_mm":6,"thickness_in":0.25}`,
	`{"thick\u006eess_in":0.25}`, `{"preheat_f":"hot"}`, `{"preheat_c":{"min":20,"max":80}}`,
	`{}`, `[]`, `null`, `"x"`, `{"a":[{"b":[1,{"c":"}"}]}],"wire_diameter_in":0.045}`,
	`{"rows":[{"thickness_in":1}],"settings":[{"current_a":1}]}`, `{"x":1,}`, ` { "current_a" : 1 } `,
	`{"wire_feed_speed_m_min":8,"wire_feed_speed_in_min":300}`, `{"travel_speed_in_min":12}`,
	`{"coupon_mark":"C-1","welded_on":"2026-11-03","thickness_mm":6,"voltage_v":24,"position":"1F"}`,
	`{"welded_on":{"thickness_in":1},"current_a":1}`, `{"welded_on":[{"thickness_in":1}]}`, `{"welded_on":null}`,
	`{"records":[{"thickness_in":1}]}`, `{"records":null,"group":{"wire_diameter_in":0.045}}`,
}

// TestStoredAsSentMatchesRewrite checks that wherever storedAsSent answers,
// the full rewrite answers the same: the body unchanged, the same issues in
// the same order, nothing rewritten; and that it answers for a plain body.
func TestStoredAsSentMatchesRewrite(t *testing.T) {
	for _, typ := range spellingTypes {
		for _, body := range spellingBodies {
			checkStoredAsSent(t, typ, []byte(body))
		}
	}
	if _, ok := storedAsSent([]byte(spellingBodies[0]), spellingTypes[0]); !ok {
		t.Errorf("storedAsSent(%s, couponIn) does not answer for a body in stored spellings", spellingBodies[0])
	}
}

// FuzzStoredAsSent: go test ./api -run XXX -fuzz FuzzStoredAsSent -fuzztime 60s
func FuzzStoredAsSent(f *testing.F) {
	for _, body := range spellingBodies {
		f.Add(uint8(0), []byte(body))
	}
	f.Fuzz(func(t *testing.T, i uint8, body []byte) {
		checkStoredAsSent(t, spellingTypes[int(i)%len(spellingTypes)], body)
	})
}

func checkStoredAsSent(t *testing.T, typ reflect.Type, body []byte) {
	t.Helper()
	issues, ok := storedAsSent(body, typ)
	if !ok {
		return
	}
	out, want, sent := rewriteSpellings(body, typ)
	if !bytes.Equal(out, body) || len(sent) > 0 {
		t.Errorf("%s %s: storedAsSent passes it unchanged, the rewrite gives %s (sent %v)", typ, body, out, sent)
	}
	if diff := cmp.Diff(want, issues); diff != "" {
		t.Errorf("%s %s: issues differ from the rewrite's (-rewrite +storedAsSent):\n%s", typ, body, diff)
	}
}
