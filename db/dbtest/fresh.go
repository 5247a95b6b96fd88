package dbtest

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"net/url"
	"os"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
)

// Fresh creates and migrates a database of the calling test's own, for tests
// that stop or block the database (outages, crashes) and so cannot share the
// package's. It returns its URL and an admin connection to the server, and
// drops the database when the test ends. dbURL is the superuser's; the
// service logs in with db.AppURL(dbURL).
func Fresh(tb testing.TB) (dbURL, name string, admin *pgx.Conn) {
	tb.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	admin, err := pgx.Connect(ctx, serverURL())
	if err != nil {
		if os.Getenv("CI") != "" {
			tb.Fatalf("dbtest: no PostgreSQL at %s: %v (CI is set: a database is required)", serverURL(), err)
		}
		tb.Skipf("dbtest: no PostgreSQL at %s: %v", serverURL(), err)
	}
	b := make([]byte, 6)
	_, _ = rand.Read(b)
	name = "etchlog_test_" + hex.EncodeToString(b)
	if _, err := admin.Exec(ctx, "CREATE DATABASE "+name); err != nil {
		tb.Fatalf("dbtest: create database: %v", err)
	}
	tb.Cleanup(func() {
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
		defer cancel()
		_, _ = admin.Exec(ctx, "ALTER DATABASE "+name+" ALLOW_CONNECTIONS true")
		_, _ = admin.Exec(ctx, "DROP DATABASE IF EXISTS "+name+" WITH (FORCE)")
		admin.Close(ctx)
	})
	u, _ := url.Parse(serverURL())
	u.Path = "/" + name
	if err := db.Setup(ctx, u.String()); err != nil {
		tb.Fatalf("dbtest: migrate %s: %v", name, err)
	}
	return u.String(), name, admin
}

// FreshConn is Fresh with a superuser connection to the new database,
// closed when the test ends, for tests that seed or inspect it directly.
func FreshConn(tb testing.TB) (dbURL string, conn *pgx.Conn) {
	tb.Helper()
	dbURL, _, _ = Fresh(tb)
	conn, err := pgx.Connect(context.Background(), dbURL)
	if err != nil {
		tb.Fatalf("dbtest: connect to %s: %v", dbURL, err)
	}
	tb.Cleanup(func() { conn.Close(context.Background()) })
	return dbURL, conn
}

// OpenApp opens the service's store (login db.AppRole) on the database at
// dbURL (a superuser's URL, such as Fresh's), signing the log with
// PrivateKey, and closes it when tb ends. No sequencer runs for it unless
// the caller starts one.
func OpenApp(tb testing.TB, dbURL string) *db.Store {
	tb.Helper()
	appURL, err := db.AppURL(dbURL)
	if err != nil {
		tb.Fatalf("dbtest: %v", err)
	}
	s, err := db.Open(context.Background(), appURL, 0)
	if err != nil {
		tb.Fatalf("dbtest: open the service's store: %v", err)
	}
	tb.Cleanup(s.Close)
	if err := s.SetLogKey(PrivateKey); err != nil {
		tb.Fatalf("dbtest: %v", err)
	}
	return s
}
