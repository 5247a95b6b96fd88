package api

import (
	"bytes"
	"errors"
	"io"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"testing/iotest"
	"unicode/utf8"
)

// cleanBodyCases are bodies at each edge of what the walk refuses: repeats
// (also spelt with an escape), control characters in names and text (C0,
// DEL, C1, as raw UTF-8 and as escapes; tabs and line breaks in prose and
// elsewhere), blank identifiers, nesting at and past maxDepth, field names
// the walk's path cuts at a dot or bracket, and invalid JSON.
var cleanBodyCases = []string{
	`{"coupon_mark":"C-1","thickness_mm":6,"notes":"ok","tags":["a","b"],"n":null,"t":true}`,
	`{"a":1,"a":2}`, `{"a":1,"\u0061":2}`, `{"a":{"b":1,"b":1}}`, `[{"a":1},{"a":1}]`,
	`{"a\u0001":1}`, "{\"a\x7f\":1}", "{\"a\u0085\":1}", `{"coupon_mark":"a\u0001"}`,
	"{\"coupon_mark\":\"a\x7fb\"}", "{\"coupon_mark\":\"a\u009fb\"}", "{\"notes\":\"a\u0085b\"}",
	`{"notes":"line\nbreak\ttab"}`, `{"coupon_mark":"line\nbreak"}`, `{"reason":"a \"quoted\" word"}`,
	`{"coupon_mark":"   "}`, `{"coupon_mark":""}`, `{"welder_id":" W "}`, `{"rows":[{"welder_id":" "}]}`,
	`{"a.coupon_mark":" "}`, `{"x]coupon_mark":" "}`, `{"a.b":1}`, `["   "]`, `" "`, `"a\u0001"`,
	strings.Repeat("[", maxDepth) + strings.Repeat("]", maxDepth),
	strings.Repeat("[", maxDepth+1) + strings.Repeat("]", maxDepth+1),
	strings.Repeat(`{"a":`, maxDepth) + "1" + strings.Repeat("}", maxDepth),
	strings.Repeat(`{"a":`, maxDepth+1) + "1" + strings.Repeat("}", maxDepth+1),
	`{"a":1,}`, `{"a":1} {}`, `{"a" 1}`, `{"a":01}`, `[1,2`, ` {"a" : [ 1 , 2 ] , "b" : { } } `,
	`{"a":-1.5e3,"b":[true,false,null],"c":{}}`,
}

// TestCleanBodyAgreesWithWalk checks that cleanBody passes a body only when
// checkBody's walk refuses nothing in it, and that it passes the plain
// bodies it is for, so the walk still names every fault.
func TestCleanBodyAgreesWithWalk(t *testing.T) {
	for _, body := range cleanBodyCases {
		checkCleanBody(t, []byte(body))
	}
	for _, body := range []string{cleanBodyCases[0], `{"notes":"line` + "\n" + `"}`, `{}`, `[]`, `1`} {
		if !cleanBody([]byte(body)) && walkBody([]byte(body)) == nil {
			t.Errorf("cleanBody(%q) = false for a body the walk passes", body)
		}
	}
}

// FuzzCleanBody: go test ./api -run XXX -fuzz FuzzCleanBody -fuzztime 60s
func FuzzCleanBody(f *testing.F) {
	for _, body := range cleanBodyCases {
		f.Add([]byte(body))
	}
	f.Fuzz(func(t *testing.T, body []byte) { checkCleanBody(t, body) })
}

func checkCleanBody(t *testing.T, body []byte) {
	t.Helper()
	if !utf8.Valid(body) {
		return // refused before either runs
	}
	if cleanBody(body) {
		if err := walkBody(body); err != nil {
			t.Errorf("cleanBody(%q) = true, but the walk refuses it: %v", body, err)
		}
	}
}

// TestReadBodyAsReadAll checks readBody against the standard library's
// io.ReadAll: the same bytes for bodies of many sizes whatever Content-Length
// says (exact, unknown, too small a guess, beyond presizeLimit), read in
// small pieces, and the same error when the body fails partway.
func TestReadBodyAsReadAll(t *testing.T) {
	for _, size := range []int{0, 1, 511, 512, 513, 700, 4096, 70000} {
		want := bytes.Repeat([]byte("w"), size)
		for _, cl := range []int64{int64(size), -1, 3, presizeLimit + 1} {
			req := httptest.NewRequest(http.MethodPost, "/v1/coupons", iotest.HalfReader(bytes.NewReader(want)))
			req.ContentLength = cl
			got, err := readBody(req)
			if err != nil || !bytes.Equal(got, want) {
				t.Fatalf("size %d, Content-Length %d: %d bytes, %v; io.ReadAll reads %d", size, cl, len(got), err, len(want))
			}
		}
	}
	failing := io.MultiReader(strings.NewReader("{\"coupon"), iotest.ErrReader(errors.New("cut")))
	req := httptest.NewRequest(http.MethodPost, "/v1/coupons", failing)
	_, err := readBody(req)
	_, wantErr := io.ReadAll(io.MultiReader(strings.NewReader("{\"coupon"), iotest.ErrReader(errors.New("cut"))))
	if err == nil || err.Error() != wantErr.Error() {
		t.Fatalf("a failing body: %v, io.ReadAll %v", err, wantErr)
	}
}
