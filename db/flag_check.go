package db

import (
	"context"
	"errors"
	"fmt"
	"slices"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// Flags are derived data: the only table the service may delete from and
// rewrite (besides current_marks), because each is a function of the
// records. RecheckFlags proves it for one site: it recomputes every flag
// from the records and compares the result with what is stored.

// FlagCheck is the outcome of RecheckFlags.
type FlagCheck struct {
	Stored     int      `json:"stored"`
	Recomputed int      `json:"recomputed"`
	Missing    []string `json:"missing"` // recomputed but not stored
	Extra      []string `json:"extra"`   // stored but not recomputed
}

// OK reports whether the stored flags are exactly the recomputed ones.
func (c FlagCheck) OK() bool { return len(c.Missing) == 0 && len(c.Extra) == 0 }

// RecheckFlags recomputes the site's flags inside a transaction that it
// rolls back, so nothing changes: every current, non-voided procedure under
// its latest ranges (model flags only without ranges), as the write path does.
func (s *Store) RecheckFlags(ctx context.Context, site string) (FlagCheck, error) {
	var c FlagCheck
	tx, err := s.pool.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead})
	if err != nil {
		return c, fmt.Errorf("db: recheck flags: %w", err)
	}
	defer tx.Rollback(ctx) //nolint:errcheck // always rolled back: a check writes nothing
	stored, err := flagTexts(ctx, tx, site)
	if err != nil {
		return c, err
	}
	rows, _ := tx.Query(ctx, `SELECT id FROM procedures cur WHERE site = $1 AND NOT voided
		AND NOT EXISTS (SELECT 1 FROM procedures l WHERE l.site = cur.site AND l.id = cur.id AND l.revision > cur.revision)`, site)
	ids, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
	if err != nil {
		return c, fmt.Errorf("db: recheck flags: %w", err)
	}
	if _, err := tx.Exec(ctx, `DELETE FROM flags WHERE site = $1`, site); err != nil {
		return c, fmt.Errorf("db: recheck flags: %w", err)
	}
	for _, id := range ids {
		pr, err := latestRanges(ctx, tx, site, id, 0)
		if errors.Is(err, ErrNotFound) {
			pr, err = ProcedureRanges{Site: site, ProcedureID: id}, nil
		}
		if err != nil {
			return c, err
		}
		if _, err := recomputeProcedure(ctx, tx, s.now(), pr); err != nil {
			return c, fmt.Errorf("db: recheck flags of procedure %s: %w", id, err)
		}
	}
	if err := siteDrift(ctx, tx, s.now(), site); err != nil {
		return c, fmt.Errorf("db: recheck drift flags: %w", err)
	}
	again, err := flagTexts(ctx, tx, site)
	if err != nil {
		return c, err
	}
	c.Stored, c.Recomputed = len(stored), len(again)
	c.Missing, c.Extra = []string{}, []string{}
	for _, f := range again {
		if _, ok := slices.BinarySearch(stored, f); !ok {
			c.Missing = append(c.Missing, f)
		}
	}
	for _, f := range stored {
		if _, ok := slices.BinarySearch(again, f); !ok {
			c.Extra = append(c.Extra, f)
		}
	}
	return c, nil
}

// flagTexts is every flag of the site as sorted JSON text, without the time
// it was computed (the only column a recomputation changes).
func flagTexts(ctx context.Context, q querier, site string) ([]string, error) {
	rows, _ := q.Query(ctx, `SELECT (to_jsonb(f) - 'computed_at')::text FROM flags f WHERE site = $1 ORDER BY 1`, site)
	v, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return nil, fmt.Errorf("db: read flags: %w", err)
	}
	slices.Sort(v) // collation order may differ from Go's
	return v, nil
}
