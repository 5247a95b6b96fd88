package api_test

import (
	"bytes"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"
)

// ndjson writes rows as newline-delimited JSON (one JSON text per line, as
// JSON Lines / NDJSON define it).
func ndjson(tb testing.TB, rows ...map[string]any) string {
	tb.Helper()
	var b strings.Builder
	for _, r := range rows {
		b.Write(normalizeJSON(r))
		b.WriteByte('\n')
	}
	return b.String()
}

// streamReport is the answer to a production stream (or a refusal's stream member).
func streamReport(tb testing.TB, r reply) map[string]any {
	tb.Helper()
	m := r.object(tb)
	if s, ok := m["stream"].(map[string]any); ok {
		return s
	}
	return m
}

// TestProductionStream: NDJSON and CSV streams are bound as the batch
// endpoint binds records (inch-pound spellings converted with 1 in =
// 25.4 mm exactly, NIST SP 811 appendix B), stored in chunks and flagged.
func TestProductionStream(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	rows := []map[string]any{productionBody(proc, "S-1", 280), productionBody(proc, "S-2", 320), productionBody(proc, "S-3", 280)}
	delete(rows[2], "travel_speed_mm_s")
	rows[2]["travel_speed_in_min"] = 14.0 // 14 in/min = 14 × 25.4 / 60 mm/s = 5.92666… mm/s
	r := e.doType(http.MethodPost, "/v1/production-records/stream?chunk=2", "technician", "application/x-ndjson", ndjson(t, rows...))
	if r.status != http.StatusOK {
		t.Fatalf("NDJSON stream = %d %s, want 200", r.status, r.body)
	}
	rep := r.object(t)
	if rep["records"] != 3.0 || rep["chunks"] != 2.0 || rep["flagged"] != 1.0 || rep["lines"] != 3.0 {
		t.Errorf("NDJSON stream report = %v, want 3 records in 2 chunks, 1 flagged (320 A), 3 lines", rep)
	}
	got := e.do(http.MethodGet, "/v1/production-records?weld_id=S-3", "auditor", nil).items(t)
	if len(got) != 1 || got[0]["travel_speed_mm_s"] != answered(14*25.4/60) {
		t.Errorf("S-3 stored as %v, want travel_speed_mm_s %v", got, answered(14*25.4/60))
	}

	// CSV (RFC 4180): a header row of field names in any accepted spelling,
	// a quoted field holding a comma, an empty cell leaving ctwd out.
	csv := "procedure_id,weld_id,welder_id,recorded_at,current_a,voltage_v,travel_speed_mm_s,wire_feed_speed_in_min,ctwd_in\r\n" +
		proc + `,"C-1, root",W-07,2026-11-20T09:30:00Z,280,29,6,374,0.75` + "\r\n" +
		proc + ",C-2,W-07,2026-11-20T09:31:00Z,280,29,6,374,\r\n"
	r = e.doType(http.MethodPost, "/v1/production-records/stream", "technician", "text/csv", csv)
	if r.status != http.StatusOK || r.object(t)["records"] != 2.0 {
		t.Fatalf("CSV stream = %d %s, want 200 and 2 records", r.status, r.body)
	}
	got = e.do(http.MethodGet, "/v1/production-records?weld_id=C-1,%20root", "auditor", nil).items(t)
	// 374 in/min = 374 × 0.0254 m/min = 9.4996 m/min; 0.75 in = 19.05 mm.
	if len(got) != 1 || got[0]["wire_feed_speed_m_min"] != answered(374*0.0254) || got[0]["ctwd_mm"] != answered(0.75*25.4) {
		t.Errorf("C-1 stored as %v, want wire feed 9.4996 m/min and CTWD 19.05 mm", got)
	}
	got = e.do(http.MethodGet, "/v1/production-records?weld_id=C-2", "auditor", nil).items(t)
	if len(got) != 1 || got[0]["ctwd_mm"] != nil {
		t.Errorf("C-2 stored as %v, want no ctwd_mm (empty cell)", got)
	}
}

// TestProductionStreamStops: the first chunk with a bad row is stored not
// at all and ends the stream; the problem names each bad row by line and
// says how many records were stored and where to resume.
func TestProductionStreamStops(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	var rows []map[string]any
	for i := range 6 {
		rows = append(rows, productionBody(proc, fmt.Sprintf("T-%d", i), 280))
	}
	rows[3]["current_a"] = 5000.0
	rows[4]["voltage_v"] = 1.0
	r := e.doType(http.MethodPost, "/v1/production-records/stream?chunk=2", "technician", "application/x-ndjson", ndjson(t, rows...))
	p := wantProblem(t, "a stream with a bad second chunk", r, http.StatusUnprocessableEntity, "line 4.current_a")
	if !names(p, "line 4.current_a") || names(p, "line 5.voltage_v") {
		t.Errorf("errors = %+v, want line 4.current_a only (line 5 is in the next chunk, never read for it)", p.Errors)
	}
	rep := streamReport(t, r)
	if rep["records"] != 2.0 || rep["chunks"] != 1.0 || rep["resume_line"] != 3.0 {
		t.Errorf("stream member = %v, want 2 records stored in 1 chunk, resume at line 3", rep)
	}
	stored := e.do(http.MethodGet, "/v1/production-records?procedure_id="+proc, "auditor", nil).items(t)
	if len(stored) != 2 {
		t.Errorf("%d records stored, want the first chunk's 2 (no half chunk)", len(stored))
	}

	// Resending from the resume line after mending stores the rest; a weld
	// already logged is refused (409) with the record it collides with.
	rows[3]["current_a"], rows[4]["voltage_v"] = 280.0, 29.0
	r = e.doType(http.MethodPost, "/v1/production-records/stream?chunk=2", "technician", "application/x-ndjson", ndjson(t, rows[2:]...))
	if r.status != http.StatusOK || r.object(t)["records"] != 4.0 {
		t.Fatalf("resent rest = %d %s, want 200 and 4 records", r.status, r.body)
	}
	r = e.doType(http.MethodPost, "/v1/production-records/stream", "technician", "application/x-ndjson", ndjson(t, productionBody(proc, "T-new", 280), rows[0]))
	p = wantProblem(t, "a weld logged before", r, http.StatusConflict, "line 2.weld_id")
	if p.ExistingID == "" || streamReport(t, r)["records"] != 0.0 {
		t.Errorf("duplicate weld: existing_id %q, stream %v; want the earlier record and nothing stored", p.ExistingID, streamReport(t, r))
	}
}

// TestProductionStreamHostile: bytes no equipment should send get a 4xx
// naming the line, never a 5xx, and store nothing of their chunk.
func TestProductionStreamHostile(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	good := ndjson(t, productionBody(proc, "H-1", 280))
	for _, c := range []struct {
		name, ctype, body, field string
		status                   int
	}{
		{"invalid UTF-8", "application/x-ndjson", good + "{\"weld_id\": \"\xff\xfe\"}\n", "line 2", 400},
		{"a NUL byte", "application/x-ndjson", good + strings.Replace(good, "H-1", `H-\u0000`, 1), "line 2.weld_id", 422},
		{"not JSON", "application/x-ndjson", good + "\x00\x01\x02garbage\n", "line 2", 400},
		{"an array", "application/x-ndjson", good + "[1,2,3]\n", "line 2", 400},
		{"a repeated key", "application/x-ndjson", good + `{"weld_id":"a","weld_id":"b"}` + "\n", "line 2.weld_id", 400},
		{"an unknown field", "application/x-ndjson", strings.Replace(good, "{", `{"colour":"blue",`, 1), "line 1.colour", 400},
		{"an overlong line", "application/x-ndjson", good + strings.Repeat("x", 70_000) + "\n", "line 2", 400},
		{"a blank weld id", "application/x-ndjson", strings.Replace(good, `"H-1"`, `"   "`, 1), "line 1.weld_id", 422},
		{"a CSV bare quote", "text/csv", "weld_id,current_a\r\nab\"c,280\r\n", "line 2", 400},
		{"a CSV short row", "text/csv", "weld_id,current_a\r\nabc\r\n", "line 2", 400},
		{"a CSV unknown column", "text/csv", "weld,current_a\r\nabc,280\r\n", "line 1.weld", 400},
		{"a raw NUL byte", "application/x-ndjson", good + strings.Replace(good, "H-1", "H-\x00", 1), "line 2", 400},
		{"no rows", "application/x-ndjson", "\n\n", "body", 400},
		{"another Content-Type", "application/json", good, "Content-Type", 400},
	} {
		r := e.doType(http.MethodPost, "/v1/production-records/stream", "technician", c.ctype, c.body)
		wantProblem(t, c.name, r, c.status, c.field)
	}
	if n := len(e.do(http.MethodGet, "/v1/production-records?procedure_id="+proc, "auditor", nil).items(t)); n != 0 {
		t.Errorf("%d records stored by refused streams, want 0", n)
	}
	if r := e.doType(http.MethodPost, "/v1/production-records/stream", "auditor", "application/x-ndjson", good); r.status != http.StatusForbidden {
		t.Errorf("an auditor's stream = %d, want 403", r.status)
	}
	// An endless line ends the stream without the server holding it.
	big := bytes.Repeat([]byte("7"), 8<<20)
	wantProblem(t, "an 8 MiB line", e.doType(http.MethodPost, "/v1/production-records/stream", "technician", "application/x-ndjson", string(big)), 400, "line 1")
}

// TestProductionStreamOutlivesReadTimeout: a stream may last longer than
// the server's read timeout for a whole request, as long as each chunk
// arrives in time (here: a 400 ms timeout, five one-row chunks 200 ms apart).
func TestProductionStreamOutlivesReadTimeout(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.rangedProcedure()
	ts := httptest.NewUnstartedServer(e.srv)
	ts.Config.ReadTimeout, ts.Config.WriteTimeout = 400*time.Millisecond, 400*time.Millisecond
	ts.Start()
	defer ts.Close()
	pr, pw := io.Pipe()
	go func() {
		for i := range 5 {
			time.Sleep(200 * time.Millisecond)
			if _, err := pw.Write([]byte(ndjson(t, productionBody(proc, fmt.Sprintf("L-%d", i), 280)))); err != nil {
				return
			}
		}
		pw.Close()
	}()
	req, err := http.NewRequest(http.MethodPost, ts.URL+"/v1/production-records/stream?chunk=1", pr)
	if err != nil {
		t.Fatal(err)
	}
	req.Header.Set("Content-Type", "application/x-ndjson")
	req.Header.Set("Authorization", "Bearer "+e.tokens["technician"])
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatalf("a slow stream: %v", err)
	}
	defer res.Body.Close()
	body, _ := io.ReadAll(res.Body)
	if res.StatusCode != http.StatusOK || !strings.Contains(string(body), `"records":5`) {
		t.Errorf("a slow stream = %d %s, want 200 and 5 records", res.StatusCode, body)
	}
}
