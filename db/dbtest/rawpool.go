package dbtest

import (
	"context"
	"testing"

	"github.com/jackc/pgx/v5/pgxpool"

	"etchlog/db"
)

// RawPool is a pool on the Store's database, as large as its main pool,
// whose sessions keep PostgreSQL's own planner settings (the Store's turn
// bitmap scans off, db.PlannerDefaults): a raw baseline's SELECT is planned as
// a plain client's would be.
func RawPool(tb testing.TB, s *db.Store) *pgxpool.Pool {
	tb.Helper()
	cfg := s.Pool().Config().Copy()
	db.PlannerDefaults(cfg.ConnConfig.RuntimeParams)
	pool, err := pgxpool.NewWithConfig(context.Background(), cfg)
	if err != nil {
		tb.Fatalf("dbtest: raw pool: %v", err)
	}
	tb.Cleanup(pool.Close)
	return pool
}
