package api_test

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"encoding/json"
	"net/http"
	"strconv"
	"strings"
	"testing"
	"time"
)

// TestExportRecomputesChain exports a site and recomputes its audit chain
// from the file alone, with crypto/sha256 and the construction the API
// description publishes: SHA-256 over the previous hash followed by seq, time
// (epoch microseconds), actor, action, entity, entity id, revision, reason and
// payload joined by U+001F. The last hash must equal the summary's chain head.
func TestExportRecomputesChain(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	coupon := e.coupon()
	e.mustMeasurement(coupon)
	body := couponBody(e.procedure(), "", uniq("EXP"))
	c := e.create("/v1/coupons", "technician", body)
	id := c["id"].(string)
	if r := e.do(http.MethodPost, "/v1/coupons/"+id+"/void", "technician", map[string]any{"base_revision": 1, "reason": "export test"}); r.status != http.StatusOK {
		t.Fatalf("void: status %d: %s", r.status, r.body)
	}

	r := e.do(http.MethodGet, "/v1/export", "auditor", nil)
	if r.status != http.StatusOK || !strings.HasPrefix(r.header.Get("Content-Type"), "application/x-ndjson") {
		t.Fatalf("export: status %d, content type %q", r.status, r.header.Get("Content-Type"))
	}
	kinds := map[string]int{}
	prev := make([]byte, 32)
	var summary struct {
		Records   int64  `json:"record_revisions"`
		Events    int64  `json:"audit_events"`
		ChainHead []byte `json:"chain_head"`
	}
	sc := bufio.NewScanner(bytes.NewReader(r.body))
	sc.Buffer(make([]byte, 1<<20), 1<<20)
	for sc.Scan() {
		var line struct {
			Kind   string          `json:"kind"`
			Record json.RawMessage `json:"record"`
		}
		if err := json.Unmarshal(sc.Bytes(), &line); err != nil {
			t.Fatalf("export line %q: %v", sc.Text(), err)
		}
		kinds[line.Kind]++
		switch line.Kind {
		case "audit_event":
			var ev struct {
				Seq      int64     `json:"seq"`
				At       time.Time `json:"at"`
				Actor    string    `json:"actor"`
				Action   string    `json:"action"`
				Entity   string    `json:"entity"`
				EntityID string    `json:"entity_id"`
				Revision int       `json:"revision"`
				Reason   string    `json:"reason"`
				Payload  string    `json:"payload_text"`
				PrevHash []byte    `json:"prev_hash"`
				Hash     []byte    `json:"hash"`
			}
			if err := json.Unmarshal(line.Record, &ev); err != nil {
				t.Fatal(err)
			}
			text := strings.Join([]string{strconv.FormatInt(ev.Seq, 10), strconv.FormatInt(ev.At.UnixMicro(), 10),
				ev.Actor, ev.Action, ev.Entity, ev.EntityID, strconv.Itoa(ev.Revision), ev.Reason, ev.Payload}, "\x1f")
			sum := sha256.Sum256(append(append([]byte{}, prev...), text...))
			if !bytes.Equal(ev.PrevHash, prev) || !bytes.Equal(ev.Hash, sum[:]) {
				t.Fatalf("event %d: recomputed hash %x, file says %x (prev link ok: %v)", ev.Seq, sum, ev.Hash, bytes.Equal(ev.PrevHash, prev))
			}
			prev = ev.Hash
		case "summary":
			if err := json.Unmarshal(line.Record, &summary); err != nil {
				t.Fatal(err)
			}
		}
	}
	// Fixture writes: PQR + procedure (shared), two coupons (one voided: 2 revisions), one measurement.
	for kind, want := range map[string]int{"procedure": 1, "coupon": 3, "measurement": 1, "summary": 1} {
		if kinds[kind] != want {
			t.Errorf("export has %d %s line(s), want %d (all kinds: %v)", kinds[kind], kind, kinds[kind], kinds)
		}
	}
	if int64(kinds["audit_event"]) != summary.Events || summary.Events == 0 {
		t.Errorf("summary says %d events, file has %d", summary.Events, kinds["audit_event"])
	}
	if !bytes.Equal(summary.ChainHead, prev) {
		t.Errorf("summary chain head %x, recomputed %x", summary.ChainHead, prev)
	}
}
