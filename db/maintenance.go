package db

import (
	"context"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
)

// StatisticsKept reports whether the database server refreshes table
// statistics by itself (autovacuum on). etchlog's list pages and its log
// sequencer read by key whatever the statistics where a test holds them
// to it, but some list plans still read far more rows while a site has
// outgrown the statistics PostgreSQL last took (README, "Lists on a site
// younger than its statistics"): with autovacuum off nothing ends that
// window but an ANALYZE, which serve then runs itself (KeepStatistics).
func (s *Store) StatisticsKept(ctx context.Context) (bool, error) {
	var on string
	if err := s.pool.QueryRow(ctx, "SHOW autovacuum").Scan(&on); err != nil {
		return false, fmt.Errorf("db: read autovacuum: %w", err)
	}
	return on == "on", nil
}

// staleTables are the service's tables (partitions included, not their
// parents) whose rows changed by more than autovacuum's default analyze
// threshold since their last analysis: 50 rows and a tenth of the rows the
// table held then (autovacuum_analyze_threshold and
// autovacuum_analyze_scale_factor, PostgreSQL's defaults), by the server's
// own counters (pg_stat_user_tables, which lag by about a second).
const staleTables = `SELECT s.relid::regclass::text FROM pg_stat_user_tables s
	JOIN pg_class c ON c.oid = s.relid
	WHERE s.schemaname = current_schema() AND c.relkind = 'r'
	  AND c.relowner = (SELECT proowner FROM pg_proc WHERE proname = 'etchlog_analyze' AND pronamespace = c.relnamespace)
	  AND s.n_mod_since_analyze > 50 + 0.1 * greatest(c.reltuples, 0)
	ORDER BY s.n_mod_since_analyze DESC`

// AnalyzeStale runs ANALYZE, as the tables' owner (etchlog_analyze,
// migration 000058), on each of the service's tables whose statistics are
// stale by autovacuum's default rule, and returns their names: what
// autovacuum would do for them, for a server where it is off.
func (s *Store) AnalyzeStale(ctx context.Context) ([]string, error) {
	rows, _ := s.pool.Query(ctx, staleTables)
	tables, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return nil, fmt.Errorf("db: stale tables: %w", err)
	}
	for i, t := range tables {
		if _, err := s.pool.Exec(ctx, `SELECT etchlog_analyze($1::regclass)`, t); err != nil {
			return tables[:i], fmt.Errorf("db: analyze %s: %w", t, err)
		}
	}
	return tables, nil
}

// KeepStatistics calls AnalyzeStale at once and then every interval until
// ctx ends, reporting each round's analysed tables (and any error) to
// done. serve runs it when StatisticsKept reports autovacuum off.
func (s *Store) KeepStatistics(ctx context.Context, every time.Duration, done func(tables []string, took time.Duration, err error)) {
	t := time.NewTicker(every)
	defer t.Stop()
	for {
		start := time.Now()
		tables, err := s.AnalyzeStale(ctx)
		if ctx.Err() != nil {
			return
		}
		if len(tables) > 0 || err != nil {
			done(tables, time.Since(start), err)
		}
		select {
		case <-ctx.Done():
			return
		case <-t.C:
		}
	}
}
