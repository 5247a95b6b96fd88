package db

import (
	"context"
	"fmt"
)

// StatisticsKept reports whether the database server refreshes table
// statistics by itself (autovacuum on). etchlog's list pages and its log
// sequencer read by key whatever the statistics where a test holds them
// to it, but some list plans still read far more rows while a site has
// outgrown the statistics PostgreSQL last took (README, "Lists on a site
// younger than its statistics"): with autovacuum off nothing ends that
// window but an ANALYZE (vacuumdb --analyze-only) run by the owner.
func (s *Store) StatisticsKept(ctx context.Context) (bool, error) {
	var on string
	if err := s.pool.QueryRow(ctx, "SHOW autovacuum").Scan(&on); err != nil {
		return false, fmt.Errorf("db: read autovacuum: %w", err)
	}
	return on == "on", nil
}
