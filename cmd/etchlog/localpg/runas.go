package localpg

import (
	"fmt"
	"os"
	"os/user"
	"path/filepath"
	"strconv"
	"syscall"
)

// serverUser is the account the private cluster runs as. When the process is
// not root it is the process's own account and cred is nil.
type serverUser struct {
	name     string
	uid, gid int
	cred     *syscall.Credential // set when the server must run as another user
}

// unprivilegedUsers are tried, in order, as the account for a cluster started
// by root, which PostgreSQL refuses to run as.
var unprivilegedUsers = []string{"postgres", "nobody"}

// pickServerUser returns the current user, or for root the first existing
// account in unprivilegedUsers.
func pickServerUser() (serverUser, error) {
	if os.Geteuid() != 0 {
		name := strconv.Itoa(os.Geteuid())
		if u, err := user.Current(); err == nil {
			name = u.Username
		}
		return serverUser{name: name, uid: os.Geteuid(), gid: os.Getegid()}, nil
	}
	for _, name := range unprivilegedUsers {
		u, err := user.Lookup(name)
		if err != nil {
			continue
		}
		uid, err1 := strconv.Atoi(u.Uid)
		gid, err2 := strconv.Atoi(u.Gid)
		if err1 != nil || err2 != nil {
			continue
		}
		cred := &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid), Groups: []uint32{}}
		return serverUser{name: name, uid: uid, gid: gid, cred: cred}, nil
	}
	return serverUser{}, fmt.Errorf("localpg: running as root and none of the users %v exists "+
		"to run PostgreSQL (it refuses root); create one or set DATABASE_URL", unprivilegedUsers)
}

// prepareDataDir creates dir (mode 0700, as PostgreSQL requires) and its
// parents (0755), hands dir to su, and checks that su can reach it.
func prepareDataDir(dir string, su serverUser) error {
	if err := os.MkdirAll(filepath.Dir(dir), 0o755); err != nil {
		return fmt.Errorf("localpg: create parent of data directory: %w", err)
	}
	if err := os.Mkdir(dir, 0o700); err != nil && !os.IsExist(err) {
		return fmt.Errorf("localpg: create data directory: %w", err)
	}
	if su.cred == nil {
		return nil
	}
	if err := os.Chown(dir, su.uid, su.gid); err != nil {
		return fmt.Errorf("localpg: hand data directory to %s: %w", su.name, err)
	}
	for p := filepath.Dir(dir); ; p = filepath.Dir(p) {
		if !canTraverse(p, su) {
			return fmt.Errorf("localpg: PostgreSQL runs as user %s, which cannot enter %s "+
				"(parent of data directory %s): make it traversable (chmod o+x) or choose another directory",
				su.name, p, dir)
		}
		if p == filepath.Dir(p) {
			return nil
		}
	}
}

// canTraverse reports whether su may search directory p according to its
// owner, group and mode bits (supplementary groups are not consulted, as the
// server runs without them).
func canTraverse(p string, su serverUser) bool {
	fi, err := os.Stat(p)
	if err != nil {
		return false
	}
	st, ok := fi.Sys().(*syscall.Stat_t)
	if !ok {
		return true // cannot tell; let the server report it
	}
	mode := fi.Mode().Perm()
	switch {
	case int(st.Uid) == su.uid:
		return mode&0o100 != 0
	case int(st.Gid) == su.gid:
		return mode&0o010 != 0
	default:
		return mode&0o001 != 0
	}
}

// chownTo hands a file the cluster must read to su when running as root.
func chownTo(path string, su serverUser) error {
	if su.cred == nil {
		return nil
	}
	return os.Chown(path, su.uid, su.gid)
}

// runAsAttr makes a child process run as su instead of root.
func runAsAttr(su serverUser) *syscall.SysProcAttr {
	return &syscall.SysProcAttr{Credential: su.cred}
}
