package db

import (
	"context"
	"time"

	"github.com/jackc/pgx/v5"
)

// RecomputeGroupForTest lets the external tests run recomputeGroup in a
// transaction of their own, as ActivateCalibration is meant to.
func (s *Store) RecomputeGroupForTest(ctx context.Context, site string, g CalibrationGroup) error {
	return pgx.BeginFunc(ctx, s.pool, func(tx pgx.Tx) error {
		return recomputeGroup(ctx, tx, time.Now().UTC(), site, g)
	})
}
