// Package localpg finds the PostgreSQL database etchlog uses when no
// DATABASE_URL is given, so a fresh checkout runs with no setup.
//
// Resolve tries, in order:
//
//  1. DATABASE_URL from the environment, returned untouched;
//  2. a server already answering at the usual local address (unix socket
//     /var/run/postgresql, then 127.0.0.1:5432) as the current OS user, then
//     as "postgres", creating the database if the server has no such database;
//  3. a private cluster started from the PostgreSQL server binaries installed
//     on the machine (initdb + pg_ctl), kept in a data directory and reused on
//     later runs.
//
// The private cluster trusts local connections and by default listens only on
// a unix socket inside its own data directory (mode 0700), so only its owner
// (and root) can reach it. It is meant for a workstation or a demo, not for
// production, where DATABASE_URL should always be set.
//
// PostgreSQL refuses to run as root. When the process is root, the cluster is
// created and run as the "postgres" system user (else "nobody"), and its data
// directory is chowned to that user. The package works on Unix systems only.
package localpg

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// Database is a resolved PostgreSQL database.
type Database struct {
	// URL is a connection string pgx accepts (postgres://...).
	URL string
	// Source tells where URL came from: SourceEnv, SourceLocalServer or
	// SourcePrivateCluster.
	Source string
	// Stop shuts the private cluster down. It is nil unless this call started
	// a cluster. Calling it is optional: a demo may leave the cluster running,
	// and the next run reuses it.
	Stop func(context.Context) error
}

// Values of Database.Source.
const (
	SourceEnv            = "env"
	SourceLocalServer    = "local-server"
	SourcePrivateCluster = "private-cluster"
)

// DefaultDatabase is the database name used when Options.Database is empty.
const DefaultDatabase = "etchlog"

// ErrNoPostgres reports that no database was configured, none answered
// locally and no server binaries were found to start one.
var ErrNoPostgres = errors.New("no PostgreSQL found: no server answers here and no server programs are installed " +
	"to start a private one. Install the PostgreSQL server (Debian/Ubuntu: sudo apt-get install postgresql, " +
	"which \"bash .ci/install-postgres\" does from the etchlog checkout; Fedora: sudo dnf install postgresql-server; " +
	"macOS: brew install postgresql), or set DATABASE_URL")

// Options tunes Resolve and the lower-level functions. The zero value gives
// the documented defaults.
type Options struct {
	// DataDir is the private cluster's data directory; empty means
	// DefaultDataDir.
	DataDir string
	// Database is the database name; empty means DefaultDatabase.
	Database string
	// Hosts are the local addresses probed, in order: socket directories
	// (absolute paths) or host names. Nil means /var/run/postgresql, 127.0.0.1.
	Hosts []string
	// Port is the local server's port; 0 means 5432.
	Port int
	// BinDir forces the directory holding initdb and pg_ctl.
	BinDir string
	// TCP makes the private cluster also listen on a free 127.0.0.1 port
	// (any local user can then connect). It is switched on anyway when the
	// socket path would be too long for the operating system.
	TCP bool
	// NoSync skips initdb's final flush to disk: faster, but a crash right
	// after initialisation can corrupt the new cluster. Meant for tests.
	NoSync bool
	// ProbeTimeout bounds each connection attempt; 0 means 2 s.
	ProbeTimeout time.Duration
	// Logf, when set, receives one line per decision taken.
	Logf func(format string, args ...any)
}

// withDefaults returns opt with every empty field filled in.
func (opt Options) withDefaults(getenv func(string) string) Options {
	if opt.Database == "" {
		opt.Database = DefaultDatabase
	}
	if opt.Hosts == nil {
		opt.Hosts = []string{"/var/run/postgresql", "127.0.0.1"}
	}
	if opt.Port == 0 {
		opt.Port = 5432
	}
	if opt.ProbeTimeout <= 0 {
		opt.ProbeTimeout = 2 * time.Second
	}
	if opt.DataDir == "" {
		opt.DataDir = DefaultDataDir(getenv)
	}
	if opt.Logf == nil {
		opt.Logf = func(string, ...any) {}
	}
	return opt
}

// DefaultDataDir returns where the private cluster lives: /var/lib/etchlog/pgdata
// for root, else $XDG_DATA_HOME/etchlog/pgdata, else ~/.local/share/etchlog/pgdata.
func DefaultDataDir(getenv func(string) string) string {
	if os.Geteuid() == 0 {
		return "/var/lib/etchlog/pgdata"
	}
	if x := getenv("XDG_DATA_HOME"); filepath.IsAbs(x) {
		return filepath.Join(x, "etchlog", "pgdata")
	}
	home := getenv("HOME")
	if home == "" {
		home, _ = os.UserHomeDir()
	}
	if home == "" {
		return filepath.Join(os.TempDir(), "etchlog-pgdata")
	}
	return filepath.Join(home, ".local", "share", "etchlog", "pgdata")
}

// Resolve returns the database etchlog should use: DATABASE_URL when getenv
// has it, else a local server that answers, else a private cluster it starts
// (or reuses). When none is possible it returns an error wrapping
// ErrNoPostgres that says what to install.
func Resolve(ctx context.Context, getenv func(string) string, opt Options) (Database, error) {
	if u := strings.TrimSpace(getenv("DATABASE_URL")); u != "" {
		return Database{URL: getenv("DATABASE_URL"), Source: SourceEnv}, nil
	}
	opt = opt.withDefaults(getenv)
	db, probeErr := FindLocalServer(ctx, opt)
	if probeErr == nil {
		return db, nil
	}
	opt.Logf("localpg: no local server: %v", probeErr)
	if _, err := FindServerBinaries(ctx, opt); err != nil {
		return Database{}, fmt.Errorf("%w.\nWhat was tried:\n  %v\n  %v", ErrNoPostgres, err, probeErr)
	}
	return StartPrivateCluster(ctx, opt.DataDir, opt)
}
