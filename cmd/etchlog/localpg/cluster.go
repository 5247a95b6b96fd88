package localpg

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"time"
)

// superuser is the role initdb creates in a private cluster.
const superuser = "etchlog"

// StartPrivateCluster makes sure a PostgreSQL cluster of etchlog's own runs in
// data directory dir and holds database opt.Database, then returns it. A new
// directory is initialised with initdb; an existing one is reused, started
// with pg_ctl when stopped, or simply connected to when already running.
// Database.Stop is set only when this call started the server.
func StartPrivateCluster(ctx context.Context, dir string, opt Options) (Database, error) {
	opt = opt.withDefaults(os.Getenv)
	dir, err := filepath.Abs(dir)
	if err != nil {
		return Database{}, fmt.Errorf("localpg: data directory: %w", err)
	}
	c, err := openCluster(ctx, dir, opt, true)
	if err != nil {
		return Database{}, err
	}
	running, err := c.running(ctx)
	if err != nil {
		return Database{}, err
	}
	var stop func(context.Context) error
	if running {
		opt.Logf("localpg: private cluster already running in %s", dir)
	} else {
		if err := c.start(ctx); err != nil {
			return Database{}, err
		}
		stop = func(ctx context.Context) error { return c.stop(ctx) }
	}
	u, err := c.url()
	if err == nil {
		err = waitReady(ctx, u, opt)
	}
	if err != nil {
		if stop != nil {
			_ = stop(ctx) // leave nothing half-started behind
		}
		return Database{}, err
	}
	return Database{URL: u, Source: SourcePrivateCluster, Stop: stop}, nil
}

// StopPrivateCluster shuts down the private cluster in dir if it runs
// (fast mode: open sessions are cancelled). It is a no-op when the server is
// stopped or dir holds no cluster.
func StopPrivateCluster(ctx context.Context, dir string, opt Options) error {
	opt = opt.withDefaults(os.Getenv)
	dir, err := filepath.Abs(dir)
	if err != nil {
		return fmt.Errorf("localpg: data directory: %w", err)
	}
	c, err := openCluster(ctx, dir, opt, false)
	if c == nil || err != nil {
		return err
	}
	running, err := c.running(ctx)
	if err != nil || !running {
		return err
	}
	return c.stop(ctx)
}

// cluster is a private data directory with the binaries and account to run it.
type cluster struct {
	dir, bin string
	su       serverUser
	opt      Options
}

// openCluster returns the cluster in dir. When dir holds none yet, it
// prepares dir and runs initdb if create is set, else returns nil, nil.
func openCluster(ctx context.Context, dir string, opt Options, create bool) (*cluster, error) {
	su, err := pickServerUser()
	if err != nil {
		return nil, err
	}
	version, err := os.ReadFile(filepath.Join(dir, "PG_VERSION"))
	if err != nil && !errors.Is(err, os.ErrNotExist) {
		return nil, fmt.Errorf("localpg: read cluster version: %w", err)
	}
	if len(version) == 0 && !create {
		return nil, nil
	}
	if err := prepareDataDir(dir, su); err != nil {
		return nil, err
	}
	bin, err := findServerBinaries(ctx, opt, strings.TrimSpace(string(version)))
	if err != nil {
		return nil, err
	}
	c := &cluster{dir: dir, bin: bin, su: su, opt: opt}
	if len(version) == 0 {
		if err := c.initdb(ctx); err != nil {
			return nil, err
		}
	}
	return c, nil
}

// initdb creates the cluster: trust authentication for local connections
// only, UTF-8 with the C locale so it does not depend on installed locales.
func (c *cluster) initdb(ctx context.Context) error {
	start := time.Now()
	args := []string{"-D", c.dir, "-U", superuser, "-A", "trust", "-E", "UTF8", "--no-locale"}
	if c.opt.NoSync {
		args = append(args, "--no-sync")
	}
	if err := c.run(ctx, "initdb", args...); err != nil {
		return err
	}
	if err := includeSettings(c.dir); err != nil {
		return err
	}
	c.opt.Logf("localpg: initialised private cluster in %s as user %s (%s)",
		c.dir, c.su.name, time.Since(start).Round(time.Millisecond))
	return nil
}

// running asks pg_ctl whether the cluster's server is up.
func (c *cluster) running(ctx context.Context) (bool, error) {
	err := c.run(ctx, "pg_ctl", "status", "-D", c.dir)
	var exit *exec.ExitError
	switch {
	case err == nil:
		return true, nil
	case errors.As(err, &exit) && exit.ExitCode() == 3: // documented "not running"
		return false, nil
	default:
		return false, err
	}
}

// start writes this run's settings and starts the server, waiting until it
// accepts connections.
func (c *cluster) start(ctx context.Context) error {
	if err := writeSettings(c.dir, c.su, c.opt); err != nil {
		return err
	}
	logFile := filepath.Join(c.dir, "etchlog-server.log")
	began := time.Now()
	if err := c.run(ctx, "pg_ctl", "start", "-D", c.dir, "-l", logFile, "-w", "-t", "60"); err != nil {
		return fmt.Errorf("%w; server log %s:\n%s", err, logFile, tail(logFile, 10))
	}
	c.opt.Logf("localpg: started private cluster in %s (%s)", c.dir, time.Since(began).Round(time.Millisecond))
	return nil
}

// stop shuts the server down in fast mode and waits for it to exit.
func (c *cluster) stop(ctx context.Context) error {
	err := c.run(ctx, "pg_ctl", "stop", "-D", c.dir, "-m", "fast", "-w", "-t", "60")
	if err == nil {
		c.opt.Logf("localpg: stopped private cluster in %s", c.dir)
	}
	return err
}

// url reads the running server's address from postmaster.pid.
func (c *cluster) url() (string, error) {
	pf, err := readPidFile(c.dir)
	if err != nil {
		return "", err
	}
	if pf.socketDir != "" && !(c.opt.TCP && pf.listenAddr != "") {
		return localURL(pf.socketDir, pf.port, superuser, c.opt.Database), nil
	}
	if pf.listenAddr == "" {
		return "", fmt.Errorf("localpg: cluster in %s listens on neither a socket nor TCP", c.dir)
	}
	return localURL("127.0.0.1", pf.port, superuser, c.opt.Database), nil
}

// run executes a server program from c.bin as the cluster's account. PG*
// variables are dropped so the caller's settings cannot redirect the tools.
func (c *cluster) run(ctx context.Context, tool string, args ...string) error {
	cmd := exec.CommandContext(ctx, filepath.Join(c.bin, tool), args...)
	cmd.Dir = "/"
	for _, kv := range os.Environ() {
		if !strings.HasPrefix(kv, "PG") {
			cmd.Env = append(cmd.Env, kv)
		}
	}
	if c.su.cred != nil {
		cmd.SysProcAttr = runAsAttr(c.su)
	}
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Run(); err != nil {
		return fmt.Errorf("localpg: %s %s: %w: %s", tool, args[0], err, strings.TrimSpace(out.String()))
	}
	return nil
}

// waitReady retries connecting (creating the database when missing) for up
// to 15 s, covering a server still recovering after an unclean shutdown.
func waitReady(ctx context.Context, dbURL string, opt Options) error {
	deadline := time.Now().Add(15 * time.Second)
	for {
		err := ensureDatabase(ctx, dbURL, opt)
		if err == nil || time.Now().After(deadline) || ctx.Err() != nil {
			return err
		}
		time.Sleep(200 * time.Millisecond)
	}
}
