package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"net/url"
	"strings"

	"etchlog/cmd/etchlog/localpg"
	"etchlog/db"
)

// config is what every command needs; flags win over the environment.
type config struct {
	Addr        string
	DatabaseURL string
	LogLevel    string
	BodyLimit   string
	LogKey      string // the private log signing key text (env ETCHLOG_LOG_KEY)
	LogKeyFile  string // or a file holding it
}

// defaults fills the configuration from the environment.
func defaults(getenv func(string) string) config {
	c := config{Addr: "127.0.0.1:8080", LogLevel: "info", BodyLimit: "1MiB", DatabaseURL: getenv("DATABASE_URL"),
		LogKey: getenv("ETCHLOG_LOG_KEY"), LogKeyFile: getenv("ETCHLOG_LOG_KEY_FILE")}
	if v := getenv("ETCHLOG_ADDR"); v != "" {
		c.Addr = v
	}
	if v := getenv("ETCHLOG_LOG_LEVEL"); v != "" {
		c.LogLevel = v
	}
	return c
}

// flags registers the shared flags on fs.
func (c *config) flags(fs *flag.FlagSet) {
	fs.StringVar(&c.Addr, "addr", c.Addr, "listen address (env ETCHLOG_ADDR)")
	fs.StringVar(&c.DatabaseURL, "database-url", c.DatabaseURL, "PostgreSQL URL (env DATABASE_URL; empty: local default database)")
	fs.StringVar(&c.LogLevel, "log-level", c.LogLevel, "debug, info, warn or error (env ETCHLOG_LOG_LEVEL)")
	fs.StringVar(&c.LogKeyFile, "log-key-file", c.LogKeyFile, "file with the log signing key made by etchlog keygen (env ETCHLOG_LOG_KEY_FILE; or the key in ETCHLOG_LOG_KEY)")
	fs.StringVar(&c.BodyLimit, "body-limit", c.BodyLimit, "largest request body, e.g. 1MiB (binary) or 1M (10^6 bytes)")
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
	return nil
}

func (c config) logger(w io.Writer) *slog.Logger {
	var l slog.Level
	_ = l.UnmarshalText([]byte(c.LogLevel))
	return slog.New(slog.NewJSONHandler(w, &slog.HandlerOptions{Level: l}))
}

// parse reads flags into a config and validates it.
func parse(name string, args []string, getenv func(string) string, stderr io.Writer, extra func(*flag.FlagSet)) (config, error) {
	c := defaults(getenv)
	fs := flag.NewFlagSet("etchlog "+name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	c.flags(fs)
	if extra != nil {
		extra(fs)
	}
	if err := fs.Parse(args); err != nil {
		return c, err
	}
	return c, c.validate()
}

// openStore resolves the database (DATABASE_URL, the local server, or a
// private cluster), applies the migrations and connects.
func openStore(ctx context.Context, c config, log *slog.Logger) (*db.Store, error) {
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
		return nil, err
	}
	log.Info("database", "source", d.Source, "url", redact(d.URL))
	if err := db.Migrate(d.URL, "up"); err != nil {
		return nil, err
	}
	return db.Open(ctx, d.URL)
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
