package localpg

import (
	"context"
	"errors"
	"fmt"
	"net/url"
	"os"
	"os/user"
	"strconv"
	"strings"

	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// FindLocalServer probes opt.Hosts on opt.Port as the current OS user, then as
// "postgres", and returns the first database that answers SELECT 1. When a
// server answers but has no database opt.Database, it connects to the
// "postgres" maintenance database and creates it.
func FindLocalServer(ctx context.Context, opt Options) (Database, error) {
	opt = opt.withDefaults(os.Getenv)
	var errs []error
	for _, host := range opt.Hosts {
		for _, role := range probeRoles() {
			u := localURL(host, opt.Port, role, opt.Database)
			err := ensureDatabase(ctx, u, opt)
			if err == nil {
				opt.Logf("localpg: using local server %s as %s", host, role)
				return Database{URL: u, Source: SourceLocalServer}, nil
			}
			errs = append(errs, fmt.Errorf("%s as %s: %w", host, role, err))
			var pgErr *pgconn.PgError
			if !errors.As(err, &pgErr) {
				break // nothing answers at this host: no point trying other roles
			}
		}
	}
	return Database{}, fmt.Errorf("localpg: no local server answered: %w", errors.Join(errs...))
}

// probeRoles lists the roles tried: the OS user, then "postgres".
func probeRoles() []string {
	roles := []string{"postgres"}
	if u, err := user.Current(); err == nil && u.Username != "" && u.Username != "postgres" {
		roles = append([]string{u.Username}, roles...)
	}
	return roles
}

// localURL builds a postgres:// URL; a host starting with "/" is a socket
// directory and goes in the host query parameter.
func localURL(host string, port int, role, database string) string {
	u := url.URL{Scheme: "postgres", User: url.User(role), Path: "/" + database}
	q := url.Values{}
	if strings.HasPrefix(host, "/") {
		q.Set("host", host)
		q.Set("port", strconv.Itoa(port))
	} else {
		u.Host = host + ":" + strconv.Itoa(port)
	}
	// pgx does not read "+" as a space in query values, so spell it %20.
	u.RawQuery = strings.ReplaceAll(q.Encode(), "+", "%20")
	return u.String()
}

// ensureDatabase checks that dbURL answers SELECT 1, creating its database
// through the "postgres" maintenance database when the server lacks it.
func ensureDatabase(ctx context.Context, dbURL string, opt Options) error {
	err := ping(ctx, dbURL, opt)
	var pgErr *pgconn.PgError
	if err == nil || !errors.As(err, &pgErr) || pgErr.Code != pgerrcode.InvalidCatalogName {
		return err
	}
	cfg, err := pgx.ParseConfig(dbURL)
	if err != nil {
		return err
	}
	name := cfg.Database
	cfg.Database = "postgres"
	cfg.ConnectTimeout = opt.ProbeTimeout
	conn, err := pgx.ConnectConfig(ctx, cfg)
	if err != nil {
		return fmt.Errorf("connect to maintenance database: %w", err)
	}
	defer conn.Close(ctx)
	_, err = conn.Exec(ctx, "CREATE DATABASE "+pgx.Identifier{name}.Sanitize())
	if errors.As(err, &pgErr) && pgErr.Code == pgerrcode.DuplicateDatabase {
		err = nil
	}
	if err != nil {
		return fmt.Errorf("create database %s: %w", name, err)
	}
	opt.Logf("localpg: created database %s", name)
	return ping(ctx, dbURL, opt)
}

// ping connects to dbURL within opt.ProbeTimeout and runs SELECT 1.
func ping(ctx context.Context, dbURL string, opt Options) error {
	cfg, err := pgx.ParseConfig(dbURL)
	if err != nil {
		return err
	}
	cfg.ConnectTimeout = opt.ProbeTimeout
	conn, err := pgx.ConnectConfig(ctx, cfg)
	if err != nil {
		return err
	}
	defer conn.Close(ctx)
	var one int
	return conn.QueryRow(ctx, "SELECT 1").Scan(&one)
}
