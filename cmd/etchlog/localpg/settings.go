package localpg

import (
	"bytes"
	"fmt"
	"net"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// settingsFile is rewritten before every start of a private cluster and
// included from postgresql.conf, so the tools never need shell-quoted options.
const settingsFile = "etchlog.conf"

// includeLine hooks settingsFile into postgresql.conf.
const includeLine = "include_if_exists = '" + settingsFile + "'"

// maxSocketPath is the longest unix socket path every Unix accepts
// (sun_path is 104 bytes on BSD and macOS, 108 on Linux, NUL included).
const maxSocketPath = 103

// includeSettings appends includeLine to postgresql.conf unless present.
func includeSettings(dir string) error {
	path := filepath.Join(dir, "postgresql.conf")
	conf, err := os.ReadFile(path)
	if err != nil {
		return fmt.Errorf("localpg: read postgresql.conf: %w", err)
	}
	if bytes.Contains(conf, []byte(includeLine)) {
		return nil
	}
	f, err := os.OpenFile(path, os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		return fmt.Errorf("localpg: extend postgresql.conf: %w", err)
	}
	_, err = fmt.Fprintf(f, "\n# Settings etchlog rewrites on every start.\n%s\n", includeLine)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return err
}

// writeSettings writes settingsFile for the next start: a unix socket in the
// data directory, and a free loopback port when TCP is wanted or the socket
// path would be too long. A small shared_buffers keeps start-up quick.
func writeSettings(dir string, su serverUser, opt Options) error {
	if err := includeSettings(dir); err != nil {
		return err
	}
	port, socketDir, listen := 5432, dir, ""
	if len(socketPath(dir, port)) > maxSocketPath {
		opt.Logf("localpg: socket path under %s too long, using TCP only", dir)
		socketDir, opt.TCP = "", true
	}
	if opt.TCP {
		p, err := freePort()
		if err != nil {
			return err
		}
		port, listen = p, "127.0.0.1"
	}
	var b strings.Builder
	b.WriteString("# Written by etchlog before each start of its private cluster; edits are lost.\n")
	fmt.Fprintf(&b, "port = %d\n", port)
	fmt.Fprintf(&b, "listen_addresses = %s\n", confQuote(listen))
	fmt.Fprintf(&b, "unix_socket_directories = %s\n", confQuote(socketDir))
	b.WriteString("unix_socket_permissions = 0700\n")
	b.WriteString("shared_buffers = 16MB\n")
	b.WriteString("max_connections = 40\n")
	path := filepath.Join(dir, settingsFile)
	if err := os.WriteFile(path, []byte(b.String()), 0o600); err != nil {
		return fmt.Errorf("localpg: write %s: %w", settingsFile, err)
	}
	return chownTo(path, su)
}

// socketPath is the socket file a server on port creates in dir.
func socketPath(dir string, port int) string {
	return filepath.Join(dir, ".s.PGSQL."+strconv.Itoa(port))
}

// confQuote quotes s as a postgresql.conf string value.
func confQuote(s string) string {
	return "'" + strings.NewReplacer(`\`, `\\`, `'`, `''`).Replace(s) + "'"
}

// freePort asks the kernel for a loopback TCP port nobody is listening on.
func freePort() (int, error) {
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		return 0, fmt.Errorf("localpg: find a free port: %w", err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port, nil
}

// pidFile is what a running server records in postmaster.pid.
type pidFile struct {
	pid        int
	port       int
	socketDir  string // first unix socket directory, "" when none
	listenAddr string // first TCP listen address, "" when none
}

// readPidFile reads dir/postmaster.pid.
func readPidFile(dir string) (pidFile, error) {
	data, err := os.ReadFile(filepath.Join(dir, "postmaster.pid"))
	if err != nil {
		return pidFile{}, fmt.Errorf("localpg: read server address: %w", err)
	}
	return parsePidFile(string(data))
}

// parsePidFile decodes postmaster.pid: one value per line, the PID on line 1,
// port on 4, socket directory on 5 and listen address on 6.
func parsePidFile(s string) (pidFile, error) {
	lines := strings.Split(s, "\n")
	for len(lines) < 6 {
		lines = append(lines, "")
	}
	field := func(i int) string { return strings.TrimSpace(lines[i-1]) }
	var pf pidFile
	var err1, err2 error
	pf.pid, err1 = strconv.Atoi(field(1))
	pf.port, err2 = strconv.Atoi(field(4))
	if err1 != nil || err2 != nil || pf.pid <= 0 || pf.port <= 0 || pf.port > 65535 {
		return pidFile{}, fmt.Errorf("localpg: malformed postmaster.pid %q", s)
	}
	pf.socketDir, pf.listenAddr = field(5), field(6)
	if pf.listenAddr == "*" {
		pf.listenAddr = "127.0.0.1" // listening everywhere includes loopback
	}
	return pf, nil
}

// tail returns the last n lines of a file, for error messages.
func tail(path string, n int) string {
	data, err := os.ReadFile(path)
	if err != nil {
		return "(" + err.Error() + ")"
	}
	lines := strings.Split(strings.TrimRight(string(data), "\n"), "\n")
	if len(lines) > n {
		lines = lines[len(lines)-n:]
	}
	return strings.Join(lines, "\n")
}
