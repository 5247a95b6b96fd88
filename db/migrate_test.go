package db_test

import (
	"context"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
)

// TestMigrateDownUp rolls every migration back on a database of its own and
// applies them again: each down file must undo its up file completely.
func TestMigrateDownUp(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	_, u := scratchDatabase(t)
	for _, dir := range []string{"up", "down", "up"} {
		if err := db.Migrate(u, dir); err != nil {
			t.Fatalf("Migrate(%s): %v", dir, err)
		}
	}
	conn, err := pgx.Connect(ctx, u)
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
