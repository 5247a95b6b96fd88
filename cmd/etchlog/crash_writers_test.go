package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// crashServer is the etchlog binary serving in a process of its own.
type crashServer struct {
	cmd  *exec.Cmd
	base string
}

// startBinary runs bin serve on a free loopback port and waits for its
// "listening on" line.
func startBinary(t *testing.T, bin, appURL, ownerURL string) *crashServer {
	t.Helper()
	cmd := exec.Command(bin, "serve", "-addr", "127.0.0.1:0", "-log-level", "warn", "-per-user", "64")
	cmd.Env = append(os.Environ(), "DATABASE_URL="+appURL, "ETCHLOG_OWNER_DATABASE_URL="+ownerURL, "ETCHLOG_LOG_KEY="+dbtest.PrivateKey)
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	cmd.Stderr = io.Discard
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	lines := bufio.NewScanner(out)
	for lines.Scan() {
		if m := listening.FindStringSubmatch(lines.Text()); m != nil {
			go func() { _, _ = io.Copy(io.Discard, out) }()
			return &crashServer{cmd: cmd, base: m[1]}
		}
	}
	_ = cmd.Process.Kill()
	t.Fatalf("etchlog serve ended before listening")
	return nil
}

// TestCrashRetriesUnderKills SIGKILLs the server process three times while 16 writers
// record coupons (each resending its coupon under the same Idempotency-Key
// until it is acknowledged), restarts it each time, and then checks that
// every acknowledged coupon is readable, stored once, and that the audit
// chain verifies: a write is acknowledged only after its transaction
// committed (PostgreSQL's write-ahead log makes a commit durable before the
// client hears of it: PostgreSQL manual, "Reliability and the Write-Ahead Log").
func TestCrashRetriesUnderKills(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and kills it: not in -short")
	}
	superURL, _, _ := dbtest.Fresh(t)
	appURL, err := db.AppURL(superURL)
	if err != nil {
		t.Fatal(err)
	}
	bin := filepath.Join(t.TempDir(), "etchlog")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	ctx := context.Background()
	owner, err := db.OpenOwner(ctx, superURL)
	if err != nil {
		t.Fatal(err)
	}
	defer owner.Close()
	if err := owner.SetLogKey(dbtest.PrivateKey); err != nil {
		t.Fatal(err)
	}
	tokens := map[string]string{}
	for _, role := range []string{db.RoleTechnician, db.RoleEngineer, db.RoleAuditor} {
		tok, _ := db.NewToken()
		if err := owner.PutUser(ctx, db.User{Site: "crash", Name: "crash-" + role, Role: role}, tok); err != nil {
			t.Fatal(err)
		}
		tokens[role] = tok
	}

	srv := startBinary(t, bin, appURL, superURL)
	var base atomic.Value
	base.Store(srv.base)
	client := &http.Client{Timeout: 10 * time.Second}
	send := func(method, path, role, key string, body any) (int, []byte, error) {
		var rd io.Reader
		if body != nil {
			js, _ := json.Marshal(body)
			rd = bytes.NewReader(js)
		}
		req, _ := http.NewRequest(method, base.Load().(string)+path, rd)
		req.Header.Set("Authorization", "Bearer "+tokens[role])
		req.Header.Set("Content-Type", "application/json")
		if key != "" {
			req.Header.Set("Idempotency-Key", key)
		}
		res, err := client.Do(req)
		if err != nil {
			return 0, nil, err
		}
		defer res.Body.Close()
		b, err := io.ReadAll(res.Body)
		return res.StatusCode, b, err
	}
	// A fixture procedure (plausible GMAW values, not reference data).
	status, b, err := send(http.MethodPost, "/v1/procedures", "engineer", "", map[string]any{
		"code": "WPS-CRASH", "title": "Fillet welds, carbon steel", "process": "GMAW", "filler_classification": "ER70S-6",
		"wire_diameter_mm": 0.9, "shielding_gas": "Ar-25CO2", "polarity": "DCEP", "transfer_mode": "short_circuit",
		"positions": []any{"2F"}, "base_metal_group": "carbon steel", "thickness_min_mm": 3.0, "thickness_max_mm": 12.0,
		"status": "draft", "supporting_record_ids": []any{}})
	if err != nil || status != http.StatusCreated {
		t.Fatalf("procedure = %d %v %s", status, err, b)
	}
	var proc struct{ ID string }
	_ = json.Unmarshal(b, &proc)

	var (
		mu      sync.Mutex
		acked   = map[string]string{} // mark → id
		byCheck int                   // acknowledged by looking the mark up after a lost answer
		errs    atomic.Int64
	)
	stop := make(chan struct{})
	var wg sync.WaitGroup
	for w := 0; w < 16; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			for i := 0; ; i++ {
				mark := fmt.Sprintf("K-%02d-%05d", w, i)
				body := map[string]any{"procedure_id": proc.ID, "coupon_mark": mark, "welder_id": "W-07",
					"welded_on": "2026-11-03", "joint_type": "fillet", "thickness_mm": 6.0, "pass_number": 1,
					"current_a": 180.0, "voltage_v": 21.0, "travel_speed_mm_s": 5.0, "wire_diameter_mm": 0.9,
					"polarity": "DCEP", "position": "2F"}
				for {
					select {
					case <-stop:
						return
					default:
					}
					status, b, err := send(http.MethodPost, "/v1/coupons", "technician", "crash-"+mark, body)
					if err != nil || status >= 500 {
						errs.Add(1)
						time.Sleep(50 * time.Millisecond)
						continue
					}
					if status == http.StatusConflict && strings.Contains(string(b), "Idempotency-Key") {
						// The answer was lost with the process: look the mark up.
						if s, lb, err := send(http.MethodGet, "/v1/coupons?coupon_mark="+mark, "auditor", "", nil); err == nil && s == http.StatusOK {
							var page struct{ Items []struct{ ID string } }
							_ = json.Unmarshal(lb, &page)
							if len(page.Items) == 1 {
								mu.Lock()
								acked[mark], byCheck = page.Items[0].ID, byCheck+1
								mu.Unlock()
								break
							}
						}
						time.Sleep(200 * time.Millisecond)
						continue
					}
					if status != http.StatusCreated {
						t.Errorf("writer %d: %s = %d %s", w, mark, status, b)
						return
					}
					var rec struct{ ID string }
					_ = json.Unmarshal(b, &rec)
					mu.Lock()
					acked[mark] = rec.ID
					mu.Unlock()
					break
				}
			}
		}(w)
	}
	const kills = 3
	for k := 0; k < kills; k++ {
		time.Sleep(1500 * time.Millisecond)
		if err := srv.cmd.Process.Kill(); err != nil { // SIGKILL: no drain, no shutdown
			t.Fatal(err)
		}
		_ = srv.cmd.Wait()
		srv = startBinary(t, bin, appURL, superURL)
		base.Store(srv.base)
	}
	time.Sleep(1500 * time.Millisecond)
	close(stop)
	wg.Wait()
	defer func() { _ = srv.cmd.Process.Kill(); _ = srv.cmd.Wait() }()

	mu.Lock()
	defer mu.Unlock()
	t.Logf("crash test: %d SIGKILLs under 16 writers; %d coupons acknowledged (%d found by mark after a lost answer); %d sends failed in transit and were resent",
		kills, len(acked), byCheck, errs.Load())
	if len(acked) < 16 {
		t.Fatalf("only %d writes acknowledged, want the writers to make progress between kills", len(acked))
	}
	lost := 0
	for mark, id := range acked {
		status, b, err := send(http.MethodGet, "/v1/coupons?coupon_mark="+mark, "auditor", "", nil)
		var page struct{ Items []struct{ ID string } }
		_ = json.Unmarshal(b, &page)
		if err != nil || status != http.StatusOK || len(page.Items) != 1 || page.Items[0].ID != id {
			lost++
			t.Errorf("acknowledged coupon %s (%s): %d %v %.200s, want it stored once", mark, id, status, err, b)
		}
	}
	status, b, err = send(http.MethodGet, "/v1/audit/verify", "auditor", "", nil)
	if err != nil || status != http.StatusOK || !strings.Contains(string(b), `"ok":true`) {
		t.Errorf("audit verify after %d kills = %d %v %.300s, want ok", kills, status, err, b)
	}
	t.Logf("crash test: %d acknowledged, %d lost; audit verify %d", len(acked), lost, status)
}
