package db

import (
	"context"
	"errors"
	"fmt"

	"github.com/golang-migrate/migrate/v4"
	migratepgx "github.com/golang-migrate/migrate/v4/database/pgx/v5"
	"github.com/golang-migrate/migrate/v4/source/iofs"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/stdlib" // also registers the "pgx" database/sql driver

	"etchlog/migrations"
)

// ErrRecordsExist means a schema roll-back was refused because the database
// holds records and the caller did not name the database to destroy.
var ErrRecordsExist = errors.New("the database holds records")

// recordTables are the tables whose rows are records or the log of them; a
// roll-back would destroy them.
var recordTables = []string{"procedures", "qualification_records", "coupons", "measurements", "audit_events",
	"calibrations", "calibration_activations", "rule_sets", "procedure_ranges", "production_batches", "production_records",
	"production_records_detached", "production_detachments", "production_welds",
	"api_users", "sign_offs", "coupon_plans", "coupon_plan_marks"}

// Migrate applies every embedded migration that the database at url lacks
// ("up"), as OwnerRole through the login in url. "down" rolls all of them
// back, but only on a database without records: see MigrateDown.
func Migrate(url, direction string) error {
	switch direction {
	case "down":
		return MigrateDown(url, "")
	case "up":
		return Setup(context.Background(), url)
	}
	return migrateRun(url, direction)
}

// MigrateDown rolls every migration back. While any record or log row
// exists it refuses with ErrRecordsExist unless destroy is the name of the
// database at url: the caller must say which database it means to destroy.
func MigrateDown(url, destroy string) error {
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		return fmt.Errorf("db: migrate down: %w", err)
	}
	defer conn.Close(ctx)
	var name string
	if err := conn.QueryRow(ctx, `SELECT current_database()`).Scan(&name); err != nil {
		return fmt.Errorf("db: migrate down: %w", err)
	}
	if destroy != name {
		for _, t := range recordTables {
			var present, any bool
			if err := conn.QueryRow(ctx, `SELECT to_regclass('public.' || $1) IS NOT NULL`, t).Scan(&present); err != nil {
				return fmt.Errorf("db: migrate down: %w", err)
			}
			if !present {
				continue
			}
			// Built-in rule sets (site '') come with the schema; a site's own are records.
			q := `SELECT EXISTS (SELECT 1 FROM ` + pgx.Identifier{t}.Sanitize() + `)`
			if t == "rule_sets" {
				q = `SELECT EXISTS (SELECT 1 FROM rule_sets WHERE site <> '')`
			}
			if err := conn.QueryRow(ctx, q).Scan(&any); err != nil {
				return fmt.Errorf("db: migrate down: %w", err)
			}
			if any {
				return fmt.Errorf("db: migrate down refused: %w (table %s) in database %q; to destroy them name the database (-destroy %s)",
					ErrRecordsExist, t, name, name)
			}
		}
	}
	return migrateRun(url, "down")
}

func migrateRun(url, direction string) error {
	src, err := iofs.New(migrations.FS, ".")
	if err != nil {
		return fmt.Errorf("db: migrations source: %w", err)
	}
	cfg, err := pgx.ParseConfig(url)
	if err != nil {
		return fmt.Errorf("db: migrate: parse url: %w", err)
	}
	cfg.RuntimeParams["role"] = OwnerRole // every object is created by, and owned by, the owner role
	conn := stdlib.OpenDB(*cfg)
	defer conn.Close()
	drv, err := migratepgx.WithInstance(conn, &migratepgx.Config{})
	if err != nil {
		return fmt.Errorf("db: migrate driver: %w", err)
	}
	m, err := migrate.NewWithInstance("iofs", src, "pgx5", drv)
	if err != nil {
		return fmt.Errorf("db: migrate: %w", err)
	}
	switch direction {
	case "up":
		err = m.Up()
	case "down":
		err = m.Down()
	default:
		return fmt.Errorf("db: migrate: unknown direction %q (want up or down)", direction)
	}
	if err != nil && !errors.Is(err, migrate.ErrNoChange) {
		return fmt.Errorf("db: migrate %s: %w", direction, err)
	}
	return nil
}
