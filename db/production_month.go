package db

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// Production records are partitioned by the UTC month of recorded_at
// (migration 000015). A write first makes sure the partition of every month
// it touches exists, in a short transaction of its own before the records'
// transaction: etchlog_production_month creates and attaches an empty table,
// which never blocks writers of other months, and a month left empty by a
// write that then failed costs nothing.

// monthOf is the first instant (UTC) of t's month.
func monthOf(t time.Time) time.Time {
	t = t.UTC()
	return time.Date(t.Year(), t.Month(), 1, 0, 0, 0, 0, time.UTC)
}

// ensureMonths makes sure a partition exists for each month of recs' recorded_at.
func (s *Store) ensureMonths(ctx context.Context, recs []ProductionRecordData) error {
	var missing []time.Time
	seen := map[time.Time]bool{}
	for i := range recs {
		m := monthOf(recs[i].RecordedAt)
		if seen[m] {
			continue
		}
		seen[m] = true
		if _, ok := s.months.Load(m); !ok {
			missing = append(missing, m)
		}
	}
	for _, m := range missing {
		if _, err := s.pool.Exec(ctx, `SELECT etchlog_production_month($1::date)`, m.Format(time.DateOnly)); err != nil {
			return fmt.Errorf("production month %s: %w", m.Format("2006-01"), mapError(err))
		}
		s.months.Store(m, true)
	}
	return nil
}

// forgetMonths drops the cache of known partitions, after a write found a
// month missing (an operator detached it while this process ran).

// errMonthGone is a write that found a month's partition detached; it is
// tried once more after the partitions are made again.
var errMonthGone = errors.New("a production month was detached while this write ran")

func (s *Store) forgetMonths() { s.months.Clear() }

// noPartition reports whether err is PostgreSQL's refusal of a row whose
// partition does not exist.
func noPartition(err error) bool {
	var pg *pgconn.PgError
	return errors.As(err, &pg) && pg.Code == pgerrcode.CheckViolation && strings.HasPrefix(pg.Message, "no partition of relation")
}

// DetachProductionMonth moves the month holding day (UTC) out of the live
// production_records into production_records_detached and records who did
// it: an administrator's step (a store opened with OpenOwner), never the
// service's. It refuses a month that is not over and a month with a record
// still waiting for its log leaf, and returns how many records moved.
// Verification and export still read the detached month; its leaves stay in
// the log, and its welds stay logged.
func (s *Store) DetachProductionMonth(ctx context.Context, day time.Time, operator string) (int64, error) {
	var n int64
	err := pgx.BeginFunc(ctx, s.pool, func(tx pgx.Tx) error {
		return tx.QueryRow(ctx, `SELECT etchlog_detach_production_month($1::date, $2)`,
			monthOf(day).Format(time.DateOnly), operator).Scan(&n)
	})
	if err != nil {
		var pg *pgconn.PgError
		if errors.As(err, &pg) {
			return 0, fmt.Errorf("db: detach production month %s: %s", monthOf(day).Format("2006-01"), pg.Message)
		}
		return 0, fmt.Errorf("db: detach production month: %w", err)
	}
	s.forgetMonths()
	return n, nil
}
