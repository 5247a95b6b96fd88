package api_test

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"encoding/base64"
	"encoding/binary"
	"encoding/json"
	"net/http"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/mod/sumdb/note"

	"etchlog/db/dbtest"
)

// TestExportRecomputesLog exports a site and recomputes its log from the file
// alone, with crypto/sha256 and the constructions the README publishes: each
// leaf's data is the length-prefixed encoding of its fact, its hash
// SHA-256(0x00 || data), and the root the Merkle Tree Hash of RFC 9162
// section 2.1.1, written out here by its recursive definition. The root
// must be the one the export's checkpoint signs (signature checked with the
// test key through golang.org/x/mod/sumdb/note).
func TestExportRecomputesLog(t *testing.T) {
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
	e.do(http.MethodGet, "/v1/coupons", "auditor", nil) // a fresh list waits until the writes are logged

	r := e.do(http.MethodGet, "/v1/export", "auditor", nil)
	if r.status != http.StatusOK || !strings.HasPrefix(r.header.Get("Content-Type"), "application/x-ndjson") {
		t.Fatalf("export: status %d, content type %q", r.status, r.header.Get("Content-Type"))
	}
	kinds := map[string]int{}
	var leaves [][]byte
	var cpNote string
	var summary struct {
		Records        int64 `json:"record_revisions"`
		Leaves         int64 `json:"leaves"`
		CheckpointSize int64 `json:"checkpoint_size"`
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
		case "leaf":
			var l struct {
				Index    int          `json:"index"`
				Kind     string       `json:"fact_kind"`
				Version  int          `json:"version"`
				Fields   [][2]*string `json:"fields"`
				LeafHash []byte       `json:"leaf_hash"`
			}
			if err := json.Unmarshal(line.Record, &l); err != nil {
				t.Fatal(err)
			}
			str := func(b []byte, s string) []byte { return append(binary.BigEndian.AppendUint32(b, uint32(len(s))), s...) }
			data := str(str(str(nil, "etchlog fact"), l.Kind), strconv.Itoa(l.Version))
			data = binary.BigEndian.AppendUint32(data, uint32(len(l.Fields)))
			for _, f := range l.Fields {
				data = str(data, *f[0])
				if f[1] == nil {
					data = binary.BigEndian.AppendUint32(data, 0xFFFFFFFF)
				} else {
					data = str(data, *f[1])
				}
			}
			h := sha256.Sum256(append([]byte{0}, data...))
			if l.Index != len(leaves) || !bytes.Equal(h[:], l.LeafHash) {
				t.Fatalf("leaf %d (position %d): recomputed hash %x, file says %x", l.Index, len(leaves), h, l.LeafHash)
			}
			leaves = append(leaves, h[:])
			kinds["leaf/"+l.Kind]++
		case "checkpoint":
			var cp struct {
				Note string `json:"note"`
			}
			if err := json.Unmarshal(line.Record, &cp); err != nil {
				t.Fatal(err)
			}
			cpNote = cp.Note
		case "summary":
			if err := json.Unmarshal(line.Record, &summary); err != nil {
				t.Fatal(err)
			}
		}
	}
	// Fixture writes: PQR + procedure (shared), two coupons (one voided: 2 revisions), one measurement.
	for kind, want := range map[string]int{"procedure": 1, "coupon": 3, "measurement": 1, "summary": 1, "export": 1, "checkpoint": 1,
		"leaf/procedure": 1, "leaf/coupon": 3, "leaf/measurement": 1} {
		if kinds[kind] != want {
			t.Errorf("export has %d %s line(s), want %d (all kinds: %v)", kinds[kind], kind, kinds[kind], kinds)
		}
	}
	if int64(len(leaves)) != summary.Leaves || summary.Leaves != summary.CheckpointSize {
		t.Errorf("summary says %d leaves and checkpoint size %d, file has %d", summary.Leaves, summary.CheckpointSize, len(leaves))
	}
	v, err := note.NewVerifier(dbtest.PublicKey)
	if err != nil {
		t.Fatal(err)
	}
	n, err := note.Open([]byte(cpNote), note.VerifierList(v))
	if err != nil {
		t.Fatalf("checkpoint signature: %v", err)
	}
	lines := strings.Split(n.Text, "\n")
	if len(lines) < 3 || lines[1] != strconv.Itoa(len(leaves)) {
		t.Fatalf("checkpoint text %q, want origin, size %d, root", n.Text, len(leaves))
	}
	if got := base64.StdEncoding.EncodeToString(mth(leaves)); got != lines[2] {
		t.Errorf("recomputed root %s, the signed checkpoint says %s", got, lines[2])
	}
}

// mth is the Merkle Tree Hash of RFC 9162 section 2.1.1 over leaf hashes:
// for n > 1, k is the largest power of two below n and
// MTH(D[n]) = SHA-256(0x01 || MTH(D[0:k]) || MTH(D[k:n])).
func mth(leaves [][]byte) []byte {
	switch len(leaves) {
	case 0:
		h := sha256.Sum256(nil)
		return h[:]
	case 1:
		return leaves[0]
	}
	k := 1
	for k*2 < len(leaves) {
		k *= 2
	}
	h := sha256.Sum256(append(append([]byte{1}, mth(leaves[:k])...), mth(leaves[k:])...))
	return h[:]
}
