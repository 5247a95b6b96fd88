package localpg

import (
	"context"
	"os"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"
)

// testDatabase is created on the machine's server by these tests and dropped
// afterwards, so the real "etchlog" database is never touched.
const testDatabase = "etchlog_localpg_test"

// maintenanceURL reaches the machine's server over TCP as postgres.
const maintenanceURL = "postgres://postgres@127.0.0.1:5432/postgres"

// needLocalServer skips when no server answers at 127.0.0.1:5432, or fails
// when CI is set, where one must be running.
func needLocalServer(t *testing.T) {
	t.Helper()
	if err := ping(context.Background(), maintenanceURL, Options{}.withDefaults(os.Getenv)); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI is set but no PostgreSQL answers at %s: %v", maintenanceURL, err)
		}
		t.Skipf("no PostgreSQL at %s (start one, or run under CI to make this a failure): %v", maintenanceURL, err)
	}
}

// dropTestDatabase removes testDatabase from the machine's server.
func dropTestDatabase(tb testing.TB) {
	tb.Helper()
	mustExec(tb, maintenanceURL, "DROP DATABASE IF EXISTS "+pgx.Identifier{testDatabase}.Sanitize()+" WITH (FORCE)")
}

// TestFindLocalServer checks each way of reaching the machine's server and
// that a missing database is created through the maintenance database.
func TestFindLocalServer(t *testing.T) {
	needLocalServer(t)
	tests := []struct {
		name  string
		hosts []string
	}{
		{"Socket", []string{"/var/run/postgresql"}},
		{"TCP", []string{"127.0.0.1"}},
		{"SkipsDeadSocketDir", []string{t.TempDir(), "127.0.0.1"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := os.Stat(tt.hosts[0]); strings.HasPrefix(tt.hosts[0], "/") && err != nil {
				t.Skipf("no socket directory %s on this machine", tt.hosts[0])
			}
			dropTestDatabase(t) // start without the database: the probe must create it
			t.Cleanup(func() { dropTestDatabase(t) })
			opt := Options{Hosts: tt.hosts, Database: testDatabase}
			db, err := FindLocalServer(context.Background(), opt)
			if err != nil {
				t.Fatalf("FindLocalServer(%v) error: %v", tt.hosts, err)
			}
			if db.Source != SourceLocalServer || db.Stop != nil {
				t.Errorf("FindLocalServer(%v) = {Source %q, stop set %t}, want {%q, false}",
					tt.hosts, db.Source, db.Stop != nil, SourceLocalServer)
			}
			if got := mustQueryInt(t, db.URL, "SELECT 1"); got != 1 {
				t.Errorf("SELECT 1 on %s = %d, want 1", db.URL, got)
			}
			n := mustQueryInt(t, maintenanceURL, "SELECT count(*) FROM pg_database WHERE datname = $1", testDatabase)
			if n != 1 {
				t.Errorf("databases named %s after FindLocalServer = %d, want 1", testDatabase, n)
			}
		})
	}
}

// TestResolveLocalServer checks that Resolve prefers a running server.
func TestResolveLocalServer(t *testing.T) {
	needLocalServer(t)
	dropTestDatabase(t)
	t.Cleanup(func() { dropTestDatabase(t) })
	// Default Hosts; DataDir and BinDir point at empty directories so a
	// fallback to a private cluster would fail instead of hiding a miss.
	opt := Options{Database: testDatabase, DataDir: t.TempDir(), BinDir: t.TempDir()}
	db, err := Resolve(context.Background(), envOf(map[string]string{"HOME": t.TempDir()}), opt)
	if err != nil {
		t.Fatalf("Resolve() error: %v", err)
	}
	if db.Source != SourceLocalServer {
		t.Errorf("Resolve().Source = %q, want %q", db.Source, SourceLocalServer)
	}
	if got := mustQueryInt(t, db.URL, "SELECT 1"); got != 1 {
		t.Errorf("SELECT 1 on %s = %d, want 1", db.URL, got)
	}
	// A second run finds the database already there and returns the same URL.
	again, err := Resolve(context.Background(), envOf(nil), opt)
	if err != nil || again.URL != db.URL {
		t.Errorf("second Resolve() = %q, %v; want %q, nil", again.URL, err, db.URL)
	}
}

// TestLocalURL checks that pgx reads back every part of the URLs we build.
func TestLocalURL(t *testing.T) {
	tests := []struct {
		name, host string
		wantHost   string
	}{
		{"Socket", "/var/run/postgresql", "/var/run/postgresql"},
		{"SocketWithSpace", "/tmp/my data", "/tmp/my data"},
		{"TCP", "127.0.0.1", "127.0.0.1"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			u := localURL(tt.host, 5433, "lab user", "etchlog")
			cfg, err := pgx.ParseConfig(u)
			if err != nil {
				t.Fatalf("pgx.ParseConfig(%q) error: %v", u, err)
			}
			if cfg.Host != tt.wantHost || cfg.Port != 5433 || cfg.User != "lab user" || cfg.Database != "etchlog" {
				t.Errorf("ParseConfig(%q) = host %q port %d user %q db %q, want %q 5433 %q %q",
					u, cfg.Host, cfg.Port, cfg.User, cfg.Database, tt.wantHost, "lab user", "etchlog")
			}
		})
	}
}
