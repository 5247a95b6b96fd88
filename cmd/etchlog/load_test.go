package main

import (
	"bytes"
	"context"
	"regexp"
	"strings"
	"testing"

	"etchlog/db/dbtest"
)

// TestLoadMixed runs the mixed load scenario for a short time against the
// demo shop: every part (technicians writing, auditors paging and exporting,
// a weld monitor sending production records) reports a rate and a p95 beside
// its raw PostgreSQL baseline, and the site's log still verifies after it.
// It runs the default mix, as the README's command does: 8 technicians and a
// weld monitor at once would pass the server's per-user limit of 8 under
// one token (a 429 ended the run), so the monitor sends under its own.
func TestLoadMixed(t *testing.T) {
	t.Parallel()
	dbURL := dbtest.EmptyDatabase(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	r := start(t, ctx, dbURL, "demo", "-addr", "127.0.0.1:0")
	var out, errOut bytes.Buffer
	err := run(context.Background(), []string{"load", "-mixed", "-url", r.base, "-duration", "2s",
		"-database-url", dbURL},
		func(string) string { return "" }, &out, &errOut)
	if err != nil {
		t.Fatalf("load -mixed = %v\nstdout:\n%s\nstderr:\n%s", err, &out, &errOut)
	}
	t.Logf("load -mixed:\n%s", &out)
	row := regexp.MustCompile(`(?m)^(\S.*?) \(\d+\)\s+([0-9.]+)\s+([0-9.]+)\s+([0-9.]+)\s+([0-9.]+)\s+([0-9.]+)\s+\[`)
	rows := row.FindAllStringSubmatch(out.String(), -1)
	if len(rows) != 4 {
		t.Fatalf("got %d part rows, want 4 (writers, pagers, exporters, producers)", len(rows))
	}
	for _, m := range rows {
		if m[2] == "0.0" || m[4] == "0.0" {
			t.Errorf("part %q did nothing: etchlog %s/s, raw %s/s", m[1], m[2], m[4])
		}
	}
	if strings.Contains(out.String(), "no raw baseline") {
		t.Error("the raw baseline did not run")
	}
	status, _, body := get(t, r.base, "/v1/audit/verify", demoUsers[2].token)
	if status != 200 || !bytes.Contains(body, []byte(`"ok":true`)) {
		t.Errorf("audit verify after the load = %d %s, want ok", status, body)
	}
	cancel()
	if err := r.stop(t); err != nil {
		t.Errorf("demo after cancellation = %v", err)
	}
}
