package spectest

import (
	"net/http"
	"net/http/httptest"
	"testing"
)

// TestCheck shows the checker refuses what the document does not describe,
// so a silent pass in the API tests means the answers really match.
func TestCheck(t *testing.T) {
	c, err := New()
	if err != nil {
		t.Fatal(err)
	}
	jsonCT := http.Header{"Content-Type": {"application/json"}}
	problemCT := http.Header{"Content-Type": {"application/problem+json"}}
	problem := []byte(`{"type":"about:blank","title":"Not Found","status":404}`)
	for _, tc := range []struct {
		name, method, path string
		status             int
		header             http.Header
		body               string
		ok                 bool
	}{
		{"OK", "GET", "/healthz", 200, jsonCT, `{"status":"ok"}`, true},
		{"ErrEnumValue", "GET", "/healthz", 200, jsonCT, `{"status":"fine"}`, false},
		{"ErrUnknownProperty", "GET", "/healthz", 200, jsonCT, `{"status":"ok","extra":1}`, false},
		{"ErrUndeclaredStatus", "GET", "/healthz", 418, jsonCT, `{"status":"ok"}`, false},
		{"ErrContentType", "GET", "/readyz", 503, jsonCT, string(problem), false},
		{"ErrMissingRequired", "GET", "/v1/coupons", 401, problemCT, `{"title":"x"}`, false},
		{"UnroutedProblem", "GET", "/v1/nothing", 404, problemCT, string(problem), true},
		{"ErrUnrouted200", "GET", "/v1/nothing", 200, jsonCT, `{}`, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			req := httptest.NewRequest(tc.method, tc.path, nil)
			err := c.Check(req, tc.status, tc.header, []byte(tc.body))
			if (err == nil) != tc.ok {
				t.Errorf("Check(%s %s → %d %s) = %v, want ok=%v", tc.method, tc.path, tc.status, tc.body, err, tc.ok)
			}
		})
	}
}
