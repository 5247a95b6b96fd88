package localpg

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
)

// serverTools are the programs a private cluster needs in one directory.
var serverTools = []string{"initdb", "pg_ctl", "postgres"}

// binGlobs are where distributions install versioned server binaries.
var binGlobs = []string{"/usr/lib/postgresql/*/bin", "/usr/pgsql-*/bin"}

// FindServerBinaries returns a directory holding initdb, pg_ctl and postgres:
// opt.BinDir when set, else `pg_config --bindir` from PATH, else the newest
// /usr/lib/postgresql/<version>/bin, else the directory of initdb on PATH.
func FindServerBinaries(ctx context.Context, opt Options) (string, error) {
	return findServerBinaries(ctx, opt, "")
}

// findServerBinaries is FindServerBinaries, preferring the major version
// wantMajor (an existing cluster's PG_VERSION) when it is not empty.
func findServerBinaries(ctx context.Context, opt Options, wantMajor string) (string, error) {
	var found []string
	for _, dir := range binCandidates(ctx, opt) {
		if !hasServerTools(dir) {
			continue
		}
		if wantMajor == "" || majorVersion(ctx, dir) == wantMajor {
			return dir, nil
		}
		found = append(found, dir)
	}
	if len(found) > 0 {
		return "", fmt.Errorf("localpg: the data directory needs PostgreSQL %s server binaries, found only %s",
			wantMajor, strings.Join(found, ", "))
	}
	return "", fmt.Errorf("localpg: no initdb/pg_ctl/postgres found via pg_config, %s or PATH",
		strings.Join(binGlobs, ", "))
}

// binCandidates lists candidate directories in order of preference.
func binCandidates(ctx context.Context, opt Options) []string {
	if opt.BinDir != "" {
		return []string{opt.BinDir}
	}
	var dirs []string
	if out, err := exec.CommandContext(ctx, "pg_config", "--bindir").Output(); err == nil {
		dirs = append(dirs, strings.TrimSpace(string(out)))
	}
	for _, g := range binGlobs {
		matches, _ := filepath.Glob(g)
		sortNewestFirst(matches)
		dirs = append(dirs, matches...)
	}
	if p, err := exec.LookPath("initdb"); err == nil {
		if real, err := filepath.EvalSymlinks(p); err == nil {
			dirs = append(dirs, filepath.Dir(real))
		}
		dirs = append(dirs, filepath.Dir(p))
	}
	return dirs
}

// sortNewestFirst orders versioned paths such as /usr/lib/postgresql/9.6/bin
// and /usr/lib/postgresql/16/bin by their version number, newest first.
func sortNewestFirst(paths []string) {
	version := func(p string) float64 {
		for _, part := range strings.Split(p, string(filepath.Separator)) {
			part = strings.TrimPrefix(part, "pgsql-")
			if v, err := strconv.ParseFloat(part, 64); err == nil {
				return v
			}
		}
		return -1
	}
	sort.SliceStable(paths, func(i, j int) bool { return version(paths[i]) > version(paths[j]) })
}

// hasServerTools reports whether dir holds every program in serverTools.
func hasServerTools(dir string) bool {
	for _, tool := range serverTools {
		fi, err := os.Stat(filepath.Join(dir, tool))
		if err != nil || fi.IsDir() || fi.Mode()&0o111 == 0 {
			return false
		}
	}
	return true
}

// majorVersion runs `pg_ctl --version` in dir and returns the major version
// as PG_VERSION spells it ("15", or "9.6" before release 10).
func majorVersion(ctx context.Context, dir string) string {
	out, err := exec.CommandContext(ctx, filepath.Join(dir, "pg_ctl"), "--version").Output()
	if err != nil {
		return ""
	}
	v, err := parseMajor(string(out))
	if err != nil {
		return ""
	}
	return v
}

// parseMajor extracts the major version from a line such as
// "pg_ctl (PostgreSQL) 15.20 (Debian 15.20-0+deb12u1)".
func parseMajor(versionLine string) (string, error) {
	_, rest, ok := strings.Cut(versionLine, "(PostgreSQL) ")
	fields := strings.Fields(rest)
	if !ok || len(fields) == 0 {
		return "", errors.New("localpg: unrecognised version line " + strconv.Quote(versionLine))
	}
	parts := strings.FieldsFunc(fields[0], func(r rune) bool { return r == '.' || r < '0' || r > '9' })
	if len(parts) == 0 {
		return "", errors.New("localpg: unrecognised version line " + strconv.Quote(versionLine))
	}
	if n, _ := strconv.Atoi(parts[0]); n < 10 && len(parts) > 1 {
		return parts[0] + "." + parts[1], nil // 9.6 and older name the major with two numbers
	}
	return parts[0], nil
}
