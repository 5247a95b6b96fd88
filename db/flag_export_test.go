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

// SetActivationHookForTest makes every activation at site call f at step
// ("computed": after its computation, "caught-up": after its catch-up
// rounds, before its flag locks; "locked": once it holds them); nil
// removes the hook.
func SetActivationHookForTest(site, step string, f func()) {
	activationHook.Lock()
	defer activationHook.Unlock()
	if activationHook.fs == nil {
		activationHook.fs = map[string]func(){}
	}
	if f == nil {
		delete(activationHook.fs, site+"\x00"+step)
		return
	}
	activationHook.fs[site+"\x00"+step] = f
}

// ActivationQueriesForTest are the queries an activation streams: the
// group's members ($1 site, $2 process, $3 joint type) and the drift
// chart's candidates (the same parameters and $4, the calibration whose
// fitted coupons are left out).
var ActivationQueriesForTest = map[string]string{"members": memberAll, "drift": driftCoupons}

// SetExportHookForTest makes every export call f(site) between its records
// and its leaves (nil: none).
func SetExportHookForTest(f func(site string)) {
	if f == nil {
		exportHook.Store(nil)
		return
	}
	exportHook.Store(&f)
}
