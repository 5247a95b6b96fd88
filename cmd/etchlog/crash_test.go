package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// server is "etchlog serve" running as a process of its own.
type server struct {
	cmd  *exec.Cmd
	base string
}

// startProcess runs the built binary's serve on url and waits for its address.
func startProcess(t *testing.T, bin, url string) *server {
	t.Helper()
	cmd := exec.Command(bin, "serve", "-addr", "127.0.0.1:0")
	cmd.Env = append(os.Environ(), "DATABASE_URL="+url, "ETCHLOG_LOG_KEY="+dbtest.PrivateKey, "ETCHLOG_LOG_LEVEL=warn")
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = cmd.Process.Kill(); _ = cmd.Wait() })
	found := make(chan string, 1)
	go func() {
		sc := bufio.NewScanner(out)
		re := regexp.MustCompile(`listening on (http://\S+)`)
		for sc.Scan() {
			if m := re.FindStringSubmatch(sc.Text()); m != nil {
				found <- m[1]
			}
		}
	}()
	select {
	case base := <-found:
		return &server{cmd: cmd, base: base}
	case <-time.After(90 * time.Second):
		t.Fatal("etchlog serve did not say where it listens within 90 s")
		return nil
	}
}

// TestCrashLosesNoAcknowledgedWrite kills "etchlog serve" with SIGKILL while
// 16 clients record coupons, starts it again on the same database, and
// checks that every coupon that was answered 201 is there, that the log
// takes in every committed write, and that the log verifies.
func TestCrashLosesNoAcknowledgedWrite(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("builds the binary and kills it")
	}
	bin := filepath.Join(t.TempDir(), "etchlog")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	url := dbtest.EmptyDatabase(t)
	srv := startProcess(t, bin, url)
	ctx := context.Background()
	const site = "crash"
	owner, err := db.OpenOwner(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer owner.Close()
	app, _ := db.AppURL(url)
	store, err := db.Open(ctx, app, 0)
	if err != nil {
		t.Fatal(err)
	}
	defer store.Close()
	for _, s := range []*db.Store{owner, store} {
		if err := s.SetLogKey(dbtest.PrivateKey); err != nil {
			t.Fatal(err)
		}
	}
	token, _ := db.NewToken()
	if err := owner.PutUser(ctx, db.User{Site: site, Name: "tech", Role: db.RoleTechnician}, token); err != nil {
		t.Fatal(err)
	}
	proc, err := store.CreateProcedure(ctx, db.Actor{Site: site, Name: "eng", Role: db.RoleEngineer}, db.ProcedureData{
		Code: "WPS-K-1", Title: "fixture", Process: "GMAW", FillerClassification: "ER70S-6", WireDiameterMM: 0.9,
		Polarity: "DCEP", Positions: []string{"2F"}, BaseMetalGroup: "carbon steel", ThicknessMinMM: 3, ThicknessMaxMM: 12, Status: "draft",
	})
	if err != nil {
		t.Fatal(err)
	}

	var mu sync.Mutex
	var acked []string
	var wg sync.WaitGroup
	client := &http.Client{Timeout: 10 * time.Second}
	for w := range 16 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := 0; ; i++ {
				body := fmt.Sprintf(`{"procedure_id": %q, "coupon_mark": "C-K-%02d-%04d", "welder_id": "W-07",
					"welded_on": "2026-11-03", "joint_type": "fillet", "thickness_mm": 6, "pass_number": 1, "current_a": 180,
					"voltage_v": 21, "travel_speed_mm_s": 5, "wire_diameter_mm": 0.9, "polarity": "DCEP", "position": "2F"}`, proc.ID, w, i)
				req, _ := http.NewRequest(http.MethodPost, srv.base+"/v1/coupons", strings.NewReader(body))
				req.Header.Set("Authorization", "Bearer "+token)
				req.Header.Set("Content-Type", "application/json")
				res, err := client.Do(req)
				if err != nil {
					return // the server is gone
				}
				b, _ := io.ReadAll(res.Body)
				res.Body.Close()
				if res.StatusCode != http.StatusCreated {
					continue
				}
				var c struct {
					ID string `json:"id"`
				}
				if json.Unmarshal(b, &c) == nil && c.ID != "" {
					mu.Lock()
					acked = append(acked, c.ID)
					mu.Unlock()
				}
			}
		}()
	}
	time.Sleep(3 * time.Second)
	if err := srv.cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	_ = srv.cmd.Wait()
	wg.Wait()
	if len(acked) < 16 {
		t.Fatalf("only %d coupons were acknowledged before the kill; want a real load", len(acked))
	}

	srv = startProcess(t, bin, url)
	for _, id := range acked {
		if status, _, body := get(t, srv.base, "/v1/coupons/"+id, token); status != http.StatusOK {
			t.Errorf("acknowledged coupon %s after the restart: %d %s", id, status, body)
		}
	}
	if err := store.AwaitLogged(ctx, site); err != nil {
		t.Fatalf("the restarted sequencer did not take in every committed write: %v", err)
	}
	v, err := store.VerifyLog(ctx, site, nil)
	if err != nil || !v.OK {
		t.Errorf("VerifyLog after the crash = %+v (err %v), want ok", v, err)
	}
	t.Logf("%d coupons acknowledged before SIGKILL, all present after the restart; log of %d leaves verifies", len(acked), v.Leaves)
}
