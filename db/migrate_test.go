package db_test

import (
	"context"
	"net/url"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestMigrateDownUp rolls every migration back on a database of its own and
// applies them again: each down file must undo its up file completely.
func TestMigrateDownUp(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	admin, err := pgx.Connect(ctx, dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	defer admin.Close(ctx)
	name := "etchlog_migrate_" + randomSuffix(t)
	if _, err := admin.Exec(ctx, "CREATE DATABASE "+name); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { // admin is closed by then: drop through a connection of its own
		ctx := context.Background()
		c, err := pgx.Connect(ctx, dbtest.URL(t))
		if err != nil {
			t.Errorf("drop %s: %v", name, err)
			return
		}
		defer c.Close(ctx)
		if _, err := c.Exec(ctx, "DROP DATABASE IF EXISTS "+name+" WITH (FORCE)"); err != nil {
			t.Errorf("drop %s: %v", name, err)
		}
	})
	u, _ := url.Parse(dbtest.URL(t))
	u.Path = "/" + name
	for _, dir := range []string{"up", "down", "up"} {
		if err := db.Migrate(u.String(), dir); err != nil {
			t.Fatalf("Migrate(%s): %v", dir, err)
		}
	}
	conn, err := pgx.Connect(ctx, u.String())
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	var tables int
	if err := conn.QueryRow(ctx, `SELECT count(*) FROM information_schema.tables
		WHERE table_schema = 'public' AND table_name IN ('procedures', 'coupons', 'audit_events', 'flags')`).Scan(&tables); err != nil || tables != 4 {
		t.Errorf("after up, down, up: %d of 4 core tables (err %v), want 4", tables, err)
	}
}

func randomSuffix(t *testing.T) string {
	t.Helper()
	s := dbtest.Site(t)
	return s[len(s)-8:]
}
