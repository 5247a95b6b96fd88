package db_test

import (
	"context"
	"fmt"
	"net"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestExportReadsTheStandby starts a real primary and a real streaming
// standby made from it with pg_basebackup -R (PostgreSQL manual, "Log-Shipping
// Standby Servers" and pg_basebackup), and checks where the export reads:
// from the standby while it keeps up, from the primary while its replay is
// paused past the lag bound (pg_wal_replay_pause), from the standby again
// once replay resumes, and from the primary when the standby is down.
func TestExportReadsTheStandby(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	pg := newScratchPG(t)
	primary := pg.start(t, "primary", "")
	if err := db.Setup(ctx, primary.url("postgres")); err != nil {
		t.Fatal(err)
	}
	standby := pg.start(t, "standby", primary.url("postgres"))

	appURL, err := db.AppURL(primary.url("postgres"))
	if err != nil {
		t.Fatal(err)
	}
	s, err := db.Open(ctx, appURL, 0)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if err := s.SetLogKey(dbtest.PrivateKey); err != nil {
		t.Fatal(err)
	}
	standbyApp, err := db.AppURL(standby.url("postgres"))
	if err != nil {
		t.Fatal(err)
	}
	if err := s.UseStandby(ctx, appURL, time.Second); err == nil {
		t.Fatal("UseStandby accepted the primary as a standby")
	}
	const maxLag = 300 * time.Millisecond
	if err := s.UseStandby(ctx, standbyApp, maxLag); err != nil {
		t.Fatal(err)
	}

	site := "standby-site"
	exportFrom := func() (string, int) {
		t.Helper()
		var from string
		lines := 0
		cx := db.NoteReadSource(ctx, func(src string) { from = src })
		if _, err := s.Export(cx, site, func(string, any) error { lines++; return nil }); err != nil {
			t.Fatalf("export: %v", err)
		}
		return from, lines
	}
	// eventually waits until the export reads from want, past the cached
	// freshness answer and the replay of the last write.
	eventually := func(want string) int {
		t.Helper()
		deadline := time.Now().Add(30 * time.Second)
		for {
			from, lines := exportFrom()
			if from == want {
				return lines
			}
			if time.Now().After(deadline) {
				t.Fatalf("export reads from %s after 30 s, want %s", from, want)
			}
			time.Sleep(100 * time.Millisecond)
		}
	}

	p := mustProcedure(t, s, site)
	eventually(db.ReadStandby)
	// The standby has replayed the procedure: the export read there holds it.
	var found bool
	cx := db.NoteReadSource(ctx, func(string) {})
	if _, err := s.Export(cx, site, func(_ string, v any) error {
		found = found || strings.Contains(fmt.Sprintf("%+v", v), p.ID.String())
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if !found {
		t.Fatalf("the export read from the standby lacks procedure %s", p.ID)
	}

	// Replay paused and the primary moves on: the standby falls behind the bound.
	standby.exec(t, "SELECT pg_wal_replay_pause()")
	mustProcedure(t, s, site)
	eventually(db.ReadPrimary)
	if lag, fresh, ok := s.StandbyLag(ctx); !ok || fresh || lag <= maxLag {
		t.Fatalf("StandbyLag = %v, fresh %v, set %v; want a lag above %v", lag, fresh, ok, maxLag)
	}
	standby.exec(t, "SELECT pg_wal_replay_resume()")
	eventually(db.ReadStandby)

	// The standby stops: the export reads the primary, and still succeeds.
	standby.stop(t)
	eventually(db.ReadPrimary)
}

// scratchPG runs private PostgreSQL clusters for one test, as the account
// postgres when the test runs as root (PostgreSQL refuses root).
type scratchPG struct {
	bin, dir string
	runAs    []string // command prefix: runuser when root
	uid, gid int
}

// pgCluster is one running cluster of a scratchPG.
type pgCluster struct {
	pg      *scratchPG
	data    string
	port    int
	stopped bool
}

// newScratchPG finds PostgreSQL's server programs and a directory the
// server's account can use. Without them the test skips on a laptop, but
// fails when CI is set.
func newScratchPG(t *testing.T) *scratchPG {
	t.Helper()
	bin := ""
	if out, err := exec.Command("pg_config", "--bindir").Output(); err == nil {
		bin = strings.TrimSpace(string(out))
	}
	if _, err := os.Stat(filepath.Join(bin, "pg_basebackup")); bin == "" || err != nil {
		found, _ := filepath.Glob("/usr/lib/postgresql/*/bin/pg_basebackup")
		if len(found) == 0 {
			if os.Getenv("CI") != "" {
				t.Fatal("no PostgreSQL server programs (pg_basebackup); CI is set, so the standby test must run")
			}
			t.Skip("no PostgreSQL server programs: bash .ci/install-postgres installs them")
		}
		bin = filepath.Dir(found[len(found)-1])
	}
	pg := &scratchPG{bin: bin, uid: os.Getuid(), gid: os.Getgid()}
	if os.Geteuid() == 0 {
		u, err := user.Lookup("postgres")
		if err != nil {
			t.Fatalf("running as root and there is no postgres account to run the server: %v", err)
		}
		pg.uid, _ = strconv.Atoi(u.Uid)
		pg.gid, _ = strconv.Atoi(u.Gid)
		pg.runAs = []string{"runuser", "-u", "postgres", "--"}
	}
	dir, err := os.MkdirTemp("", "etchlog-standby-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	if err := os.Chmod(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.Chown(dir, pg.uid, pg.gid); err != nil {
		t.Fatal(err)
	}
	pg.dir = dir
	return pg
}

// run runs one of the server programs as the server's account.
func (pg *scratchPG) run(t *testing.T, tool string, args ...string) {
	t.Helper()
	argv := append(append(append([]string{}, pg.runAs...), filepath.Join(pg.bin, tool)), args...)
	cmd := exec.Command(argv[0], argv[1:]...)
	cmd.Dir = pg.dir
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("%s: %v\n%s", tool, err, out)
	}
}

// start makes and starts a cluster: a new one with initdb (trust for local
// and replication connections), or, given a primary's URL, a standby copied
// from it with pg_basebackup -R (which writes standby.signal and
// primary_conninfo). It is stopped when the test ends.
func (pg *scratchPG) start(t *testing.T, name, primaryURL string) *pgCluster {
	t.Helper()
	c := &pgCluster{pg: pg, data: filepath.Join(pg.dir, name), port: freeTCPPort(t)}
	if primaryURL == "" {
		pg.run(t, "initdb", "-D", c.data, "-U", "postgres", "-A", "trust", "-E", "UTF8", "--no-locale")
	} else {
		pg.run(t, "pg_basebackup", "-d", primaryURL, "-D", c.data, "-R", "-X", "stream", "-c", "fast")
	}
	pg.run(t, "pg_ctl", "-D", c.data, "-l", filepath.Join(pg.dir, name+".log"), "-w", "-t", "60", "start",
		"-o", fmt.Sprintf("-p %d -c listen_addresses=127.0.0.1 -c unix_socket_directories='' -c shared_buffers=16MB -c max_connections=30", c.port))
	t.Cleanup(func() { c.stop(t) })
	return c
}

// url is the cluster's connection URL for login.
func (c *pgCluster) url(login string) string {
	return fmt.Sprintf("postgres://%s@127.0.0.1:%d/postgres?sslmode=disable", login, c.port)
}

// exec runs one statement on the cluster as its superuser.
func (c *pgCluster) exec(t *testing.T, sql string) {
	t.Helper()
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, c.url("postgres"))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	if _, err := conn.Exec(ctx, sql); err != nil {
		t.Fatalf("%s: %v", sql, err)
	}
}

// stop shuts the cluster down at once (immediate mode), if it runs.
func (c *pgCluster) stop(t *testing.T) {
	if c.stopped {
		return
	}
	c.stopped = true
	c.pg.run(t, "pg_ctl", "-D", c.data, "-m", "immediate", "-w", "stop")
}

// freeTCPPort asks the kernel for a loopback port that is free right now.
func freeTCPPort(t *testing.T) int {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}
