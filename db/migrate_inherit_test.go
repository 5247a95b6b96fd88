package db_test

import (
	"context"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
)

// TestMigrateDownRefusesLeftOutWire: once a coupon has left its wire
// diameter out (inherited from its procedure), rolling back the migration
// that allowed it fails naming the columns, and the column stays nullable
// (the refusal changes nothing; records are never filled in by invention).
func TestMigrateDownRefusesLeftOutWire(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	name, u := scratchDatabase(t)
	if err := db.Migrate(u, "up"); err != nil {
		t.Fatal(err)
	}
	conn, err := pgx.Connect(ctx, u)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	if _, err := conn.Exec(ctx, `INSERT INTO coupons (site, id, revision, created_at, created_by, qualification_record_id,
		coupon_mark, welder_id, welded_on, joint_type, thickness_mm, pass_number, current_a, voltage_v, travel_speed_mm_s, position)
		VALUES ('s', gen_random_uuid(), 1, now(), 'tester', gen_random_uuid(), 'C-1', 'W-1', '2026-11-03', 'fillet', 6, 1, 180, 21, 5, '2F')`); err != nil {
		t.Fatal(err)
	}
	err = db.MigrateDown(u, name)
	if err == nil || !strings.Contains(err.Error(), "wire_diameter_mm or polarity") {
		t.Fatalf("MigrateDown with a coupon leaving its wire out: %v; want a refusal naming wire_diameter_mm or polarity", err)
	}
	var nullable string
	if err := conn.QueryRow(ctx, `SELECT is_nullable FROM information_schema.columns
		WHERE table_name = 'coupons' AND column_name = 'wire_diameter_mm'`).Scan(&nullable); err != nil || nullable != "YES" {
		t.Errorf("after the refused rollback wire_diameter_mm is_nullable = %q (err %v), want YES", nullable, err)
	}
}
