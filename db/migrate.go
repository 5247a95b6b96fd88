package db

import (
	"database/sql"
	"errors"
	"fmt"

	"github.com/golang-migrate/migrate/v4"
	migratepgx "github.com/golang-migrate/migrate/v4/database/pgx/v5"
	"github.com/golang-migrate/migrate/v4/source/iofs"
	_ "github.com/jackc/pgx/v5/stdlib" // registers the "pgx" database/sql driver

	"etchlog/migrations"
)

// Migrate applies every embedded migration that the database at url lacks
// ("up") or rolls all of them back ("down").
func Migrate(url, direction string) error {
	src, err := iofs.New(migrations.FS, ".")
	if err != nil {
		return fmt.Errorf("db: migrations source: %w", err)
	}
	conn, err := sql.Open("pgx", url)
	if err != nil {
		return fmt.Errorf("db: migrate open: %w", err)
	}
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
