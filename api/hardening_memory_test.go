package api_test

import (
	"fmt"
	"net/http"
	"runtime"
	"runtime/metrics"
	"strings"
	"sync"
	"testing"
	"time"
)

// heapBound is the most the heap may grow above its resting size while the
// server answers eight hostile 1 MiB bodies at once. Measured on the
// reference machine: see the figure logged by TestHostileBodiesMemory and
// the README; before the bounded answers the same load took 3.0 GB.
const heapBound = 128 << 20

// hostileBodies are 1 MiB bodies built to make a server amplify them: one
// fault per array item, thousands of unknown fields, deep nesting, one
// control character per field.
func hostileBodies(procedureID string) []struct{ path, role, body string } {
	const size = 1 << 20
	fill := func(head, item, tail string) string {
		n := (size - len(head) - len(tail)) / (len(item) + 1)
		return head + strings.Repeat(item+",", n-1) + item + tail
	}
	var props strings.Builder
	props.WriteString("{")
	for i := 0; props.Len() < size-32; i++ {
		fmt.Fprintf(&props, `"unknown_%d":1,`, i)
	}
	props.WriteString(`"x":1}`)
	row := fmt.Sprintf(`{"procedure_id":"%s","weld_id":"J\u0000","welder_id":"W\u0001","recorded_at":"2026-11-20T09:30:00Z","current_a":180,"voltage_v":21,"travel_speed_mm_s":5,"wire_feed_speed_m_min":7.6}`, procedureID)
	return []struct{ path, role, body string }{
		{"/v1/production-records", "technician", fill(`{"records":[`, "1", `]}`)},
		{"/v1/predictions", "auditor", props.String()},
		{"/v1/coupons", "technician", strings.Repeat("[", size/2) + strings.Repeat("]", size/2)},
		{"/v1/production-records", "technician", fill(`{"records":[`, row, `]}`)},
	}
}

// heapObjects reads the bytes held by live and not yet swept heap objects.
func heapObjects() uint64 {
	s := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	metrics.Read(s)
	return s[0].Value.Uint64()
}

// TestHostileBodiesMemory sends eight hostile 1 MiB bodies in parallel, twice,
// and samples the heap with runtime/metrics while they are answered: its
// growth stays under heapBound, and every answer is a 4xx problem.
func TestHostileBodiesMemory(t *testing.T) {
	e := newEnv(t)
	bodies := hostileBodies(e.procedure())
	runtime.GC()
	base := heapObjects()
	var peak uint64
	stop := make(chan struct{})
	sampled := make(chan struct{})
	go func() {
		defer close(sampled)
		tick := time.NewTicker(time.Millisecond)
		defer tick.Stop()
		for {
			select {
			case <-stop:
				return
			case <-tick.C:
				peak = max(peak, heapObjects())
			}
		}
	}()
	for round := 0; round < 2; round++ {
		var wg sync.WaitGroup
		for i := 0; i < 8; i++ {
			wg.Add(1)
			go func(b struct{ path, role, body string }) {
				defer wg.Done()
				r := e.do(http.MethodPost, b.path, b.role, b.body)
				if r.status < 400 || r.status >= 500 {
					t.Errorf("POST %s (%d bytes) = %d, want a 4xx", b.path, len(b.body), r.status)
				}
				if len(r.body) > 32<<10 {
					t.Errorf("POST %s: answer of %d bytes, want at most 32 KiB", b.path, len(r.body))
				}
			}(bodies[i%len(bodies)])
		}
		wg.Wait()
	}
	close(stop)
	<-sampled
	growth := int64(peak) - int64(base)
	t.Logf("heap objects: resting %.1f MiB, peak %.1f MiB, growth %.1f MiB (bound %d MiB) for 8 parallel 1 MiB hostile bodies",
		float64(base)/(1<<20), float64(peak)/(1<<20), float64(growth)/(1<<20), heapBound>>20)
	if growth > heapBound {
		t.Errorf("heap grew %d MiB answering hostile bodies, want at most %d MiB", growth>>20, heapBound>>20)
	}
}
