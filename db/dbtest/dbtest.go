// Package dbtest gives each test package a fresh PostgreSQL database of its own,
// created on the server named by ETCHLOG_TEST_DATABASE_URL (default: the local
// server at 127.0.0.1:5432), migrated, and dropped when the package's tests end.
package dbtest

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"fmt"
	"net/url"
	"os"
	"sync"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/logfmt"
)

// DefaultServerURL is the maintenance database used when ETCHLOG_TEST_DATABASE_URL is unset.
const DefaultServerURL = "postgres://postgres@127.0.0.1:5432/postgres?sslmode=disable"

var (
	once    sync.Once
	store   *db.Store // the service's view: logged in as db.AppRole
	owner   *db.Store // the administrator's view: as db.OwnerRole
	dbURL   string    // the test server's superuser login on the test database
	appURL  string
	dbName  string
	setupEr error
)

func serverURL() string {
	if u := os.Getenv("ETCHLOG_TEST_DATABASE_URL"); u != "" {
		return u
	}
	return DefaultServerURL
}

func setup() {
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	admin, err := pgx.Connect(ctx, serverURL())
	if err != nil {
		setupEr = fmt.Errorf("no PostgreSQL at %s: %w", serverURL(), err)
		return
	}
	defer admin.Close(ctx)
	b := make([]byte, 6)
	_, _ = rand.Read(b)
	dbName = "etchlog_test_" + hex.EncodeToString(b)
	if _, err := admin.Exec(ctx, "CREATE DATABASE "+dbName); err != nil {
		setupEr = fmt.Errorf("create test database: %w", err)
		return
	}
	u, _ := url.Parse(serverURL())
	u.Path = "/" + dbName
	dbURL = u.String()
	if err := db.Setup(ctx, dbURL); err != nil {
		setupEr = err
		return
	}
	if appURL, setupEr = db.AppURL(dbURL); setupEr != nil {
		return
	}
	if owner, setupEr = db.OpenOwner(ctx, dbURL); setupEr != nil {
		return
	}
	if store, setupEr = db.Open(ctx, appURL, 0); setupEr != nil {
		return
	}
	if setupEr = store.SetLogKey(PrivateKey); setupEr != nil {
		return
	}
	if setupEr = owner.SetLogKey(PrivateKey); setupEr != nil {
		return
	}
	var seqCtx context.Context
	seqCtx, stopSequencer = context.WithCancel(context.Background())
	go store.RunSequencer(seqCtx, db.SequencerOptions{Retry: 100 * time.Millisecond}) //nolint:errcheck // ends with the package
}

// PrivateKey and PublicKey are the package's log signing key pair, made
// afresh for each test run; the package's stores sign with PrivateKey and
// the service store runs a log sequencer.
var PrivateKey, PublicKey = func() (string, string) {
	skey, vkey, err := logfmt.GenerateKey("etchlog-test")
	if err != nil {
		panic(err) // crypto/rand failed: nothing can run
	}
	return skey, vkey
}()

var stopSequencer context.CancelFunc = func() {}

// URL returns the superuser connection URL of the package's test database:
// for tests that play an administrator or an attacker with SQL access.
func URL(tb testing.TB) string {
	tb.Helper()
	Store(tb)
	return dbURL
}

// Conn returns a superuser connection to the package's test database,
// closed when the test ends: for tests that read the catalog or write rows
// with SQL alone.
func Conn(tb testing.TB) *pgx.Conn {
	tb.Helper()
	conn, err := pgx.Connect(context.Background(), URL(tb))
	if err != nil {
		tb.Fatalf("dbtest: connect to the test database: %v", err)
	}
	tb.Cleanup(func() { conn.Close(context.Background()) })
	return conn
}

// AppURL returns the service's connection URL of the package's test database
// (login db.AppRole).
func AppURL(tb testing.TB) string {
	tb.Helper()
	Store(tb)
	return appURL
}

// Owner returns the package's test database as an administrator sees it
// (db.OpenOwner): for what the service may not do, such as adding users.
func Owner(tb testing.TB) *db.Store {
	tb.Helper()
	Store(tb)
	return owner
}

// Store returns the package's migrated test database as the service sees it
// (login db.AppRole). Without a reachable server the test is skipped on a
// laptop, but fails when CI is set.
func Store(tb testing.TB) *db.Store {
	tb.Helper()
	once.Do(setup)
	if setupEr != nil {
		if os.Getenv("CI") != "" {
			tb.Fatalf("dbtest: %v (CI is set: a database is required)", setupEr)
		}
		tb.Skipf("dbtest: %v (set ETCHLOG_TEST_DATABASE_URL to run database tests)", setupEr)
	}
	return store
}

// Site returns a site key unique to the calling test, so tests sharing the
// package database never see each other's rows.
func Site(tb testing.TB) string {
	tb.Helper()
	b := make([]byte, 4)
	_, _ = rand.Read(b)
	return tb.Name() + "-" + hex.EncodeToString(b)
}

// Main runs the package's tests (a *testing.M, or a wrapper around one) and
// then drops the test database.
func Main(m interface{ Run() int }) {
	code := m.Run()
	if owner != nil {
		owner.Close()
	}
	if store != nil {
		stopSequencer()
		store.Close()
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
		if admin, err := pgx.Connect(ctx, serverURL()); err == nil {
			_, _ = admin.Exec(ctx, "DROP DATABASE IF EXISTS "+dbName+" WITH (FORCE)")
			admin.Close(ctx)
		}
		cancel()
	}
	os.Exit(code)
}

// EmptyDatabase creates a database of the calling test's own on the test
// server, with no schema, and drops it when the test ends. It suits tests
// that migrate themselves or need a database nobody else has written to
// (the demo loads its fixed site once per database).
func EmptyDatabase(tb testing.TB) string {
	tb.Helper()
	Store(tb) // skip or fail as every database test does without a server
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	admin, err := pgx.Connect(ctx, serverURL())
	if err != nil {
		tb.Fatalf("dbtest: %v", err)
	}
	defer admin.Close(ctx)
	b := make([]byte, 6)
	_, _ = rand.Read(b)
	name := "etchlog_test_" + hex.EncodeToString(b)
	if _, err := admin.Exec(ctx, "CREATE DATABASE "+name); err != nil {
		tb.Fatalf("dbtest: create %s: %v", name, err)
	}
	tb.Cleanup(func() {
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
		defer cancel()
		c, err := pgx.Connect(ctx, serverURL())
		if err != nil {
			tb.Errorf("dbtest: drop %s: %v", name, err)
			return
		}
		defer c.Close(ctx)
		if _, err := c.Exec(ctx, "DROP DATABASE IF EXISTS "+name+" WITH (FORCE)"); err != nil {
			tb.Errorf("dbtest: drop %s: %v", name, err)
		}
	})
	u, _ := url.Parse(serverURL())
	u.Path = "/" + name
	return u.String()
}
