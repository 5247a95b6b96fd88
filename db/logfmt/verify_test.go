package logfmt

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"runtime"
	"strconv"
	"sync/atomic"
	"testing"
	"time"

	"github.com/transparency-dev/merkle/rfc6962"
)

// TestHashesMatchRFC9162 compares the leaf and node hashes with the RFC
// 6962/9162 hasher of github.com/transparency-dev/merkle, and the empty
// log's root with SHA-256 of nothing (RFC 9162 section 2.1.1).
func TestHashesMatchRFC9162(t *testing.T) {
	data := Fact{Kind: "coupon", Version: 1, Fields: []Field{{Name: "current_a", Value: "180"}, {Name: "ctwd_mm", Null: true}}}.Encode()
	if got, want := HashLeaf(data), rfc6962.DefaultHasher.HashLeaf(data); !bytes.Equal(got, want) {
		t.Errorf("HashLeaf = %x, rfc6962 = %x", got, want)
	}
	l, r := HashLeaf([]byte("a")), HashLeaf([]byte("b"))
	if got, want := HashChildren(l, r), rfc6962.DefaultHasher.HashChildren(l, r); !bytes.Equal(got, want) {
		t.Errorf("HashChildren = %x, rfc6962 = %x", got, want)
	}
	if got := NewVerifier("s", "").Root(); fmt.Sprintf("%x", got) != "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855" {
		t.Errorf("empty root = %x, want SHA-256 of nothing", got)
	}
}

// TestEncodeLayout checks the leaf encoding byte for byte against the
// layout the README publishes.
func TestEncodeLayout(t *testing.T) {
	got := Fact{Kind: "k", Version: 2, Fields: []Field{{Name: "a", Value: "xy"}, {Name: "b", Null: true}}}.Encode()
	want := []byte("\x00\x00\x00\x0cetchlog fact" + "\x00\x00\x00\x01k" + "\x00\x00\x00\x012" + "\x00\x00\x00\x02" +
		"\x00\x00\x00\x01a" + "\x00\x00\x00\x02xy" + "\x00\x00\x00\x01b" + "\xff\xff\xff\xff")
	if !bytes.Equal(got, want) {
		t.Errorf("Encode = %q, want %q", got, want)
	}
}

// benchFact is the i-th synthetic production-record-like fact (invented
// values; only the log's arithmetic is measured).
func benchFact(i int) Fact {
	n := strconv.Itoa(i)
	return Fact{Kind: "production_record", Version: 1, Fields: []Field{
		{Name: "site", Value: "bench"}, {Name: "id", Value: "00000000-0000-7000-8000-" + fmt.Sprintf("%012d", i)},
		{Name: "weld_id", Value: "W-" + n}, {Name: "welder_id", Value: "TR-W04"},
		{Name: "recorded_at", Value: "2026-11-05T08:00:00.000000Z"}, {Name: "current_a", Value: "190"},
		{Name: "voltage_v", Value: "24"}, {Name: "travel_speed_mm_s", Value: "6"}, {Name: "wire_feed_speed_m_min", Value: "8"},
		{Name: "ctwd_mm", Null: true}, {Name: "created_at", Value: "2026-11-05T08:00:01.000000Z"}, {Name: "created_by", Value: "ines"},
	}}
}

// BenchmarkVerifyExport1M verifies an export of 1,000,000 leaves streamed
// through a pipe (no file), as "etchlog verify" reads one, and reports the
// largest heap in use while it ran: the tree costs one hash per level, so
// the heap stays flat however long the log is. Run with -benchtime 1x.
func BenchmarkVerifyExport1M(b *testing.B) {
	const n = 1_000_000
	skey, vkey, err := GenerateKey("bench")
	if err != nil {
		b.Fatal(err)
	}
	signer, _ := NewSigner(skey)
	v := NewVerifier("bench", vkey)
	for i := range n {
		v.Leaf(ExportLeaf{Index: uint64(i), LeafHash: benchFact(i).LeafHash(), Missing: "hash only"})
	}
	note, _ := SignCheckpoint(signer, "bench", n, v.Root())
	for range b.N {
		pr, pw := io.Pipe()
		go func() {
			// The lines as the export writes them (its leaf writer, whose
			// bytes are encoding/json's), buffered as a file's would be.
			w := bufio.NewWriterSize(pw, 64<<10)
			_ = json.NewEncoder(w).Encode(map[string]any{"kind": LineHeader, "record": ExportHeader{Site: "bench", Format: 2}})
			var line []byte
			for i := range n {
				f := benchFact(i)
				line = append(line[:0], `{"kind":"leaf","record":`...)
				line = ExportLeaf{Index: uint64(i), Kind: f.Kind, Version: 1, Fields: f.Fields, LeafHash: f.LeafHash(),
					Actor: "ines", Action: "create", At: "2026-11-05T08:00:01.000000Z"}.AppendJSON(line)
				_, _ = w.Write(append(line, '}', '\n'))
			}
			_ = w.Flush()
			pw.Close()
		}()
		var peak atomic.Uint64
		done := make(chan struct{})
		go func() {
			var ms runtime.MemStats
			for {
				select {
				case <-done:
					return
				case <-time.After(50 * time.Millisecond):
				}
				runtime.ReadMemStats(&ms)
				if ms.HeapInuse > peak.Load() {
					peak.Store(ms.HeapInuse)
				}
			}
		}()
		start := time.Now()
		rep, err := VerifyExport(pr, vkey, []byte(note), nil)
		close(done)
		if err != nil || !rep.OK || rep.Leaves != n {
			b.Fatalf("VerifyExport = %d leaves ok %v (%v) %v", rep.Leaves, rep.OK, err, rep.Problems)
		}
		b.ReportMetric(time.Since(start).Seconds(), "s/verify")
		b.ReportMetric(float64(peak.Load())/(1<<20), "peak-heap-MiB")
	}
}
