package localpg

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"
)

// needServerBinaries skips when no initdb/pg_ctl is installed, or fails when
// CI is set, where they must be.
func needServerBinaries(t *testing.T) {
	t.Helper()
	if _, err := FindServerBinaries(context.Background(), Options{}); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI is set but no PostgreSQL server binaries were found: %v", err)
		}
		t.Skipf("no PostgreSQL server binaries (install the server, or run under CI to make this a failure): %v", err)
	}
}

// clusterDir returns a data directory path inside a fresh temporary
// directory that the server's account can reach when tests run as root, and
// stops any cluster left in it when the test ends.
func clusterDir(t *testing.T) string {
	t.Helper()
	tmp := t.TempDir()
	for _, p := range []string{filepath.Dir(tmp), tmp} {
		if err := os.Chmod(p, 0o755); err != nil {
			t.Fatalf("chmod %s: %v", p, err)
		}
	}
	dir := filepath.Join(tmp, "pgdata")
	t.Cleanup(func() {
		if err := StopPrivateCluster(context.Background(), dir, Options{}); err != nil {
			t.Errorf("StopPrivateCluster(%s) in cleanup: %v", dir, err)
		}
	})
	return dir
}

// logRecorder collects Logf lines.
type logRecorder struct {
	mu    sync.Mutex
	lines []string
}

func (r *logRecorder) logf(format string, args ...any) {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.lines = append(r.lines, fmt.Sprintf(format, args...))
}

// count returns how many lines contain sub.
func (r *logRecorder) count(sub string) int {
	r.mu.Lock()
	defer r.mu.Unlock()
	n := 0
	for _, l := range r.lines {
		if strings.Contains(l, sub) {
			n++
		}
	}
	return n
}

// TestStartPrivateCluster runs initdb and pg_ctl for real: first start,
// reuse while running, stop, then restart through Resolve keeping the data.
func TestStartPrivateCluster(t *testing.T) {
	needServerBinaries(t)
	ctx := context.Background()
	dir := clusterDir(t)
	var rec logRecorder
	opt := Options{Logf: rec.logf, NoSync: true}

	began := time.Now()
	first, err := StartPrivateCluster(ctx, dir, opt)
	if err != nil {
		t.Fatalf("StartPrivateCluster(new dir) error: %v", err)
	}
	t.Logf("initdb + start: %v", time.Since(began).Round(time.Millisecond))
	if first.Source != SourcePrivateCluster || first.Stop == nil {
		t.Fatalf("StartPrivateCluster(new dir) = {Source %q, stop set %t}, want {%q, true}",
			first.Source, first.Stop != nil, SourcePrivateCluster)
	}
	if got := mustQueryInt(t, first.URL, "SELECT 1"); got != 1 {
		t.Errorf("SELECT 1 on %s = %d, want 1", first.URL, got)
	}
	mustExec(t, first.URL, "CREATE TABLE kept (n int); INSERT INTO kept VALUES (42)")
	if os.Geteuid() == 0 {
		fi, err := os.Stat(dir)
		if err != nil {
			t.Fatal(err)
		}
		if uid := fi.Sys().(*syscall.Stat_t).Uid; uid == 0 {
			t.Errorf("data directory owner uid = 0, want the unprivileged server account")
		}
	}

	t.Run("AlreadyRunning", func(t *testing.T) {
		again, err := StartPrivateCluster(ctx, dir, opt)
		if err != nil {
			t.Fatalf("StartPrivateCluster(running) error: %v", err)
		}
		if again.URL != first.URL || again.Stop != nil {
			t.Errorf("StartPrivateCluster(running) = {%q, stop set %t}, want {%q, false}",
				again.URL, again.Stop != nil, first.URL)
		}
	})

	began = time.Now()
	if err := first.Stop(ctx); err != nil {
		t.Fatalf("Stop() error: %v", err)
	}
	t.Logf("stop: %v", time.Since(began).Round(time.Millisecond))
	if err := ping(ctx, first.URL, opt.withDefaults(os.Getenv)); err == nil {
		t.Errorf("server at %s still answers after Stop()", first.URL)
	}

	t.Run("ReuseViaResolveTCP", func(t *testing.T) {
		// Nothing answers in an empty socket directory, so Resolve falls back
		// to the stopped cluster, which must keep its data.
		ropt := opt
		ropt.Hosts, ropt.DataDir, ropt.TCP = []string{t.TempDir()}, dir, true
		began := time.Now()
		db, err := Resolve(ctx, envOf(nil), ropt)
		if err != nil {
			t.Fatalf("Resolve() error: %v", err)
		}
		t.Logf("restart: %v", time.Since(began).Round(time.Millisecond))
		defer func() {
			if err := db.Stop(ctx); err != nil {
				t.Errorf("Stop() error: %v", err)
			}
		}()
		if db.Source != SourcePrivateCluster || db.Stop == nil || !strings.Contains(db.URL, "@127.0.0.1:") {
			t.Errorf("Resolve() = {%q, %q, stop set %t}, want a TCP URL from %q with Stop",
				db.URL, db.Source, db.Stop != nil, SourcePrivateCluster)
		}
		if got := mustQueryInt(t, db.URL, "SELECT n FROM kept"); got != 42 {
			t.Errorf("SELECT n FROM kept after restart = %d, want 42", got)
		}
	})
	if n := rec.count("initialised private cluster"); n != 1 {
		t.Errorf("initdb ran %d times, want 1 (later starts must reuse the data directory)", n)
	}
}

// TestStartPrivateClusterLongPath checks the TCP fallback when the socket
// path would be too long.
func TestStartPrivateClusterLongPath(t *testing.T) {
	needServerBinaries(t)
	ctx := context.Background()
	// Deep enough that the socket path exceeds what the kernel accepts.
	dir := filepath.Join(clusterDir(t), strings.Repeat("d", maxSocketPath))
	if n := len(socketPath(dir, 5432)); n <= maxSocketPath {
		t.Fatalf("len(socketPath(%s)) = %d, want > %d for this case", dir, n, maxSocketPath)
	}
	t.Cleanup(func() {
		if err := StopPrivateCluster(ctx, dir, Options{}); err != nil {
			t.Errorf("StopPrivateCluster(%s) in cleanup: %v", dir, err)
		}
	})
	db, err := StartPrivateCluster(ctx, dir, Options{NoSync: true})
	if err != nil {
		t.Fatalf("StartPrivateCluster(long path) error: %v", err)
	}
	if !strings.Contains(db.URL, "@127.0.0.1:") {
		t.Errorf("StartPrivateCluster(long path).URL = %q, want a TCP URL", db.URL)
	}
	if got := mustQueryInt(t, db.URL, "SELECT 1"); got != 1 {
		t.Errorf("SELECT 1 on %s = %d, want 1", db.URL, got)
	}
}

// TestStartPrivateClusterUnreachableDir checks the error when root picks a
// directory the server account cannot enter.
func TestStartPrivateClusterUnreachableDir(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("only root hands the cluster to another account, which must reach the directory")
	}
	needServerBinaries(t)
	// t.TempDir's parent is mode 0700 and owned by root: closed to the server account.
	dir := filepath.Join(t.TempDir(), "pgdata")
	_, err := StartPrivateCluster(context.Background(), dir, Options{})
	if err == nil || !strings.Contains(err.Error(), "cannot enter") {
		t.Errorf("StartPrivateCluster(%s) error = %v, want one saying the server account cannot enter it", dir, err)
	}
}
