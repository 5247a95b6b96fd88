package api_test

import (
	"encoding/base64"
	"fmt"
	"net/http"
	"testing"

	"github.com/transparency-dev/merkle/proof"
	"github.com/transparency-dev/merkle/rfc6962"

	"etchlog/db/dbtest"
	"etchlog/db/logfmt"
)

// b64 decodes a base64 JSON byte string.
func b64(t *testing.T, v any) []byte {
	t.Helper()
	s, _ := v.(string)
	b, err := base64.StdEncoding.DecodeString(s)
	if err != nil {
		t.Fatalf("not base64: %v", v)
	}
	return b
}

// provedRevision fetches the inclusion proof of one log entry, checks it
// with the RFC 9162 verifier against the root of the signed checkpoint it
// comes with (signature checked with the test key), checks that the fact it
// shows hashes to the leaf, and returns the fact's revision field.
func provedRevision(t *testing.T, e *testEnv, ev map[string]any) float64 {
	t.Helper()
	r := e.do(http.MethodGet, fmt.Sprintf("/v1/log/inclusion?entity=%s&entity_id=%s&revision=%v", ev["entity"], ev["entity_id"], ev["revision"]), "auditor", nil)
	if r.status != http.StatusOK {
		t.Fatalf("inclusion proof: %d %s", r.status, r.body)
	}
	p := r.object(t)
	cp := p["checkpoint"].(map[string]any)
	site, signed, err := logfmt.OpenCheckpoint([]byte(cp["checkpoint"].(string)), dbtest.PublicKey)
	if err != nil || site == "" {
		t.Fatalf("checkpoint: %v", err)
	}
	var hashes [][]byte
	for _, h := range p["hashes"].([]any) {
		hashes = append(hashes, b64(t, h))
	}
	leaf := b64(t, p["leaf_hash"])
	if err := proof.VerifyInclusion(rfc6962.DefaultHasher, uint64(p["index"].(float64)), signed.Size, leaf, hashes, signed.Hash); err != nil {
		t.Errorf("inclusion proof of %v revision %v does not verify: %v", ev["entity_id"], ev["revision"], err)
	}
	var f logfmt.Fact
	f.Kind, f.Version = ev["entity"].(string), int(ev["fact_version"].(float64))
	rev := 0.0
	for _, pair := range p["fact"].([]any) {
		kv := pair.([]any)
		fl := logfmt.Field{Name: kv[0].(string), Null: kv[1] == nil}
		if !fl.Null {
			fl.Value = kv[1].(string)
		}
		if fl.Name == "revision" {
			fmt.Sscan(fl.Value, &rev)
		}
		f.Fields = append(f.Fields, fl)
	}
	if got := f.LeafHash(); string(got) != string(leaf) {
		t.Errorf("the fact shown with the proof hashes to %x, the leaf is %x", got, leaf)
	}
	return rev
}
