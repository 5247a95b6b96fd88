package main

import (
	"bytes"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"net/url"
	"strconv"
	"strings"
	"time"

	"etchlog/api"
	"etchlog/cmd/etchlog/localpg"
	"etchlog/db"
)

// config is what every command needs; flags win over the environment.
type config struct {
	Addr        string
	DatabaseURL string
	// OwnerURL is the administrator's login for migrations and users; empty
	// means DATABASE_URL's login when that is a superuser (see databases).
	OwnerURL   string
	LogLevel   string
	BodyLimit  string
	PerUser    int
	DBConns    int    // the main pool's connections to PostgreSQL (db.Open)
	LogKey     string // the private log signing key text (env ETCHLOG_LOG_KEY)
	LogKeyFile string // or a file holding it
	// ReadURL is a streaming standby the export may read from (env
	// DATABASE_READ_URL), while its replay lag stays within ReadMaxLag.
	ReadURL    string
	ReadMaxLag time.Duration
}

// defaults fills the configuration from the environment.
func defaults(getenv func(string) string) config {
	c := config{Addr: "127.0.0.1:8080", LogLevel: "info", BodyLimit: "1MiB", PerUser: api.DefaultPerUser, DBConns: db.DefaultConns, DatabaseURL: getenv("DATABASE_URL"),
		OwnerURL: getenv("ETCHLOG_OWNER_DATABASE_URL"), LogKey: getenv("ETCHLOG_LOG_KEY"), LogKeyFile: getenv("ETCHLOG_LOG_KEY_FILE"),
		ReadURL: getenv("DATABASE_READ_URL"), ReadMaxLag: 5 * time.Second}
	if v := getenv("ETCHLOG_ADDR"); v != "" {
		c.Addr = v
	}
	if v := getenv("ETCHLOG_LOG_LEVEL"); v != "" {
		c.LogLevel = v
	}
	if v := getenv("ETCHLOG_DB_CONNS"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil {
			n = -1
		}
		c.DBConns = n // validate refuses a number below 1
	}
	return c
}

// databaseFlags registers -database-url and -owner-database-url, which every
// command that opens the database takes.
func (c *config) databaseFlags(fs *flag.FlagSet) {
	fs.StringVar(&c.DatabaseURL, "database-url", c.DatabaseURL, "PostgreSQL URL (env DATABASE_URL; empty: the local server, else a private cluster)")
	fs.StringVar(&c.OwnerURL, "owner-database-url", c.OwnerURL,
		"administrator's PostgreSQL URL for migrations and users (env ETCHLOG_OWNER_DATABASE_URL; empty: DATABASE_URL if its login is a superuser)")
}

// serverFlags registers the flags of the commands that serve HTTP.
func (c *config) serverFlags(fs *flag.FlagSet) {
	fs.StringVar(&c.Addr, "addr", c.Addr, "listen address (env ETCHLOG_ADDR)")
	fs.StringVar(&c.LogLevel, "log-level", c.LogLevel, "debug, info, warn or error (env ETCHLOG_LOG_LEVEL)")
	fs.StringVar(&c.LogKeyFile, "log-key-file", c.LogKeyFile, "file with the log signing key made by etchlog keygen (env ETCHLOG_LOG_KEY_FILE; or the key in ETCHLOG_LOG_KEY)")
	fs.StringVar(&c.BodyLimit, "body-limit", c.BodyLimit, "largest request body, e.g. 1MiB (binary) or 1M (10^6 bytes)")
	fs.IntVar(&c.PerUser, "per-user", c.PerUser, "requests one user may have running at once; more get 429")
	fs.IntVar(&c.DBConns, "db-conns", c.DBConns, fmt.Sprintf("connections to PostgreSQL for requests, at most (env ETCHLOG_DB_CONNS); "+
		"exports and audit verifications have %d more, the log sequencer one", db.LongReadConns))
	fs.StringVar(&c.ReadURL, "database-read-url", c.ReadURL,
		"PostgreSQL streaming standby the export reads from while it keeps up (env DATABASE_READ_URL; empty: none)")
	fs.DurationVar(&c.ReadMaxLag, "read-max-lag", c.ReadMaxLag, "replay lag past which the export reads the primary instead of the standby")
}

// validate checks the configuration before anything is opened.
func (c config) validate() error {
	var l slog.Level
	if err := l.UnmarshalText([]byte(c.LogLevel)); err != nil {
		return fmt.Errorf("log level %q: want debug, info, warn or error", c.LogLevel)
	}
	if c.Addr == "" {
		return fmt.Errorf("listen address is empty")
	}
	if c.DBConns < 1 || c.DBConns > 1000 {
		return fmt.Errorf("db-conns (env ETCHLOG_DB_CONNS): want a whole number from 1 to 1000")
	}
	return nil
}

func (c config) logger(w io.Writer) *slog.Logger {
	var l slog.Level
	_ = l.UnmarshalText([]byte(c.LogLevel))
	return slog.New(slog.NewJSONHandler(w, &slog.HandlerOptions{Level: l}))
}

// newFlagSet returns the flag set of the command name. Its usage shows the
// synopsis (the command line after "etchlog"), says what the command does and
// lists only the flags registered on it.
func newFlagSet(name, synopsis, about string) *flag.FlagSet {
	fs := flag.NewFlagSet("etchlog "+name, flag.ContinueOnError)
	fs.Usage = func() {
		fmt.Fprintf(fs.Output(), "usage: etchlog %s\n\n%s\n", synopsis, about)
		n := 0
		fs.VisitAll(func(*flag.Flag) { n++ })
		if n > 0 {
			fmt.Fprintln(fs.Output(), "\nflags:")
			fs.PrintDefaults()
		}
	}
	return fs
}

// parseFlags parses args with fs. Asked for help (-h, -help), it prints the
// usage on stdout and returns flag.ErrHelp, which run turns into success; a
// bad flag prints the usage on stderr and returns the error.
func parseFlags(fs *flag.FlagSet, args []string, stdout, stderr io.Writer) error {
	var out bytes.Buffer
	fs.SetOutput(&out)
	err := fs.Parse(args)
	if errors.Is(err, flag.ErrHelp) {
		_, _ = out.WriteTo(stdout)
	} else {
		_, _ = out.WriteTo(stderr)
	}
	return err
}

// parseServer reads the flags of a command that serves HTTP (serve, demo)
// into a config and validates it.
func parseServer(name, about string, args []string, getenv func(string) string, stdout, stderr io.Writer) (config, error) {
	c := defaults(getenv)
	fs := newFlagSet(name, name+" [flags]", about)
	c.serverFlags(fs)
	c.databaseFlags(fs)
	if err := parseFlags(fs, args, stdout, stderr); err != nil {
		return c, err
	}
	if fs.NArg() > 0 {
		return c, fmt.Errorf("%s: unexpected argument %q", name, fs.Arg(0))
	}
	return c, c.validate()
}

// databases are the two logins etchlog uses on one database: the service's
// (db.AppRole) and the administrator's, which runs migrations as db.OwnerRole
// and manages users. Owner is empty when no administrator's login is known.
type databases struct{ app, owner string }

// resolve finds the database (DATABASE_URL, the local server, or a private
// cluster) and the two logins. When DATABASE_URL's login is a superuser (a
// workstation, the demo, a test server) it serves as the administrator's, and
// the service logs in to the same database as db.AppRole.
func (c config) resolve(ctx context.Context, log *slog.Logger) (databases, error) {
	getenv := func(k string) string {
		if k == "DATABASE_URL" {
			return c.DatabaseURL
		}
		return ""
	}
	d, err := localpg.Resolve(ctx, getenv, localpg.Options{Logf: func(f string, a ...any) {
		log.Info(strings.TrimSpace(fmt.Sprintf(f, a...)))
	}})
	if err != nil {
		return databases{}, err
	}
	dbs := databases{app: d.URL, owner: c.OwnerURL}
	if dbs.owner == "" {
		priv, err := db.Privileged(ctx, d.URL)
		if err != nil {
			return databases{}, err
		}
		if priv {
			dbs.owner = d.URL
			if dbs.app, err = db.AppURL(d.URL); err != nil {
				return databases{}, err
			}
		}
	}
	log.Info("database", "source", d.Source, "service", redact(dbs.app), "owner", redact(dbs.owner))
	return dbs, nil
}

// openStore applies the migrations (when an administrator's login is known)
// and connects the service as db.AppRole.
func openStore(ctx context.Context, c config, log *slog.Logger) (*db.Store, error) {
	dbs, err := c.resolve(ctx, log)
	if err != nil {
		return nil, err
	}
	if dbs.owner != "" {
		if err := db.Setup(ctx, dbs.owner); err != nil {
			return nil, err
		}
	} else {
		log.Info("no administrator login: migrations are not applied (set -owner-database-url)")
	}
	store, err := db.Open(ctx, dbs.app, c.DBConns)
	if err != nil || c.ReadURL == "" {
		return store, err
	}
	if err := store.UseStandby(ctx, c.ReadURL, c.ReadMaxLag); err != nil {
		store.Close()
		return nil, err
	}
	log.Info("export reads from the standby while it keeps up", "max_lag", c.ReadMaxLag.String())
	return store, nil
}

// openOwner connects as the administrator (db.OwnerRole), for user changes.
func openOwner(ctx context.Context, c config, log *slog.Logger) (*db.Store, error) {
	dbs, err := c.resolve(ctx, log)
	if err != nil {
		return nil, err
	}
	if dbs.owner == "" {
		return nil, fmt.Errorf("this needs the administrator's login: set -owner-database-url (env ETCHLOG_OWNER_DATABASE_URL)")
	}
	if err := db.Setup(ctx, dbs.owner); err != nil {
		return nil, err
	}
	return db.OpenOwner(ctx, dbs.owner)
}

// redact hides a password in a URL for logging.
func redact(raw string) string {
	u, err := url.Parse(raw)
	if err != nil || u.User == nil {
		return raw
	}
	if _, ok := u.User.Password(); ok {
		u.User = url.UserPassword(u.User.Username(), "***")
	}
	return u.String()
}
