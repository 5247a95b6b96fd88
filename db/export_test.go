package db

import (
	"context"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"
)

// OpenTraced is Open with tr watching every statement of the service pool,
// for tests that examine what a method sends (the list plans test).
func OpenTraced(ctx context.Context, url string, tr pgx.QueryTracer) (*Store, error) {
	s, err := Open(ctx, url)
	if err != nil {
		return nil, err
	}
	cfg := s.pool.Config()
	cfg.ConnConfig.Tracer = tr
	p, err := pgxpool.NewWithConfig(ctx, cfg)
	if err != nil {
		s.Close()
		return nil, err
	}
	s.pool.Close()
	s.pool = p
	return s, nil
}

// CouponListRefresh is the statement the sequencer rewrites coupon_list
// rows with, for the plan test.
var CouponListRefresh = couponListRefresh
