package db

import (
	"context"
	"fmt"
	"sync"
	"time"

	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"
)

// On one connection the leaf cursors and the row windows take turns: the
// database computes one FETCH while the other waits. With a second
// connection of the long-read pool free at once, splitLeaves reads the
// leaves as one streamed query (index order, every kind) on the export's
// connection and the rows beside them on the second, in the same snapshot
// (pg_export_snapshot), so the two reads run at the same time and the
// leaves need no cursor; each kind's rows are read through a portal of
// the second connection (see portal), and the rows read by key between
// its parts. It waits for no connection: when none is free
// within splitWait (another export may hold it), or a kind has leaves of
// two versions (their rows are joined in a cursor), the export reads on its
// one connection as before.

// splitWait bounds the wait for the second connection.
const splitWait = 250 * time.Millisecond

// splitLeaves emits the leaves as exportLeaves does, or reports false
// without reading any when it cannot split the read.
func splitLeaves(ctx context.Context, pool *pgxpool.Pool, tx pgx.Tx, site string, kinds []kindVersion, sink exportSink) (int64, map[string]*unclaimed, bool, error) {
	seen := map[string]bool{}
	for _, kv := range kinds {
		if seen[kv.Kind] {
			return 0, nil, false, nil
		}
		seen[kv.Kind] = true
	}
	if pool == nil {
		return 0, nil, false, nil
	}
	actx, cancel := context.WithTimeout(ctx, splitWait)
	c2, err := pool.Acquire(actx)
	cancel()
	if err != nil {
		return 0, nil, false, ctx.Err() // nil unless the export itself was cancelled
	}
	defer c2.Release()
	var snap string
	if err := tx.QueryRow(ctx, `SELECT pg_export_snapshot()`).Scan(&snap); err != nil {
		return 0, nil, true, err
	}
	tx2, err := c2.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
	if err != nil {
		return 0, nil, true, err
	}
	defer tx2.Rollback(ctx) //nolint:errcheck // read-only
	if _, err := tx2.Exec(ctx, "SET TRANSACTION SNAPSHOT "+quoteLiteral(snap)); err != nil {
		return 0, nil, true, err
	}
	// The export's transaction holds its tables' locks while it waits for
	// this one, so a lock request queued between the two (a TRUNCATE, an
	// ALTER TABLE, a production month detached) would leave both waiting
	// for good, where PostgreSQL's deadlock check cannot see it. So this
	// connection waits at most splitWait for a lock: while it opens its
	// windows (the only statements that take new locks) the export then
	// reads on its one connection as before; later, the export fails
	// instead of hanging.
	if _, err := tx2.Exec(ctx, "SET LOCAL lock_timeout = "+quoteLiteral(fmt.Sprintf("%dms", splitWait.Milliseconds()))); err != nil {
		return 0, nil, true, err
	}
	pc := newPortalConn(tx2)
	defer pc.settle(ctx) //nolint:errcheck // a part asked ahead is read before the rollback; on an error the connection is closed
	windows := map[string]*rowWindow{}
	var all []*rowWindow
	for _, kv := range kinds {
		k, err := leafKind(kv.Kind, kv.Version)
		if err != nil {
			continue // unknown: its leaves say so
		}
		w, err := newRowWindow(ctx, tx2, k, site, fmt.Sprintf("etchlog_rows_%s_%d", identifier(kv.Kind), kv.Version), pc)
		if pgErrCode(err) == pgerrcode.LockNotAvailable {
			return 0, nil, false, nil // a lock request is queued: read on one connection
		}
		if err != nil {
			return 0, nil, true, err
		}
		windows[kv.Kind] = w
		all = append(all, w)
	}

	rctx, stop := context.WithCancel(ctx)
	defer stop()
	listed := make(chan *leafBatch, 2)
	batches := make(chan *leafBatch, 2)
	var (
		wg         sync.WaitGroup
		lerr, rerr error
		claimed    map[string]*unclaimed
	)
	wg.Add(2)
	go func() { // the leaves, on the export's connection
		defer wg.Done()
		defer close(listed)
		if lerr = listLeaves(rctx, tx, site, windows, listed); lerr != nil {
			stop()
		}
	}()
	go func() { // their rows, on the second connection
		defer wg.Done()
		defer close(batches)
		for b := range listed {
			if rerr != nil {
				continue // drain
			}
			for i := range b.leaves {
				o := &b.leaves[i]
				if o.w == nil {
					continue // an unknown kind
				}
				if err := o.w.attach(rctx, tx2, o); err != nil {
					rerr = err
					stop()
					break
				}
			}
			if rerr == nil {
				select {
				case batches <- b:
				case <-rctx.Done():
					rerr = rctx.Err()
				}
			}
		}
		if rerr == nil && lerr == nil {
			claimed, rerr = unclaimedRows(rctx, tx2, all)
		}
	}()
	n, werr := writeLeaves(batches, sink, stop)
	wg.Wait()
	for _, err := range []error{werr, lerr, rerr} {
		if err != nil {
			return n, nil, true, err
		}
	}
	return n, claimed, true, nil
}

// listLeaves sends every leaf of the site in index order, in batches, with
// no row: unknown kinds marked so.
func listLeaves(ctx context.Context, tx pgx.Tx, site string, windows map[string]*rowWindow, out chan<- *leafBatch) error {
	rows, err := tx.Query(ctx, "SELECT "+listingColumns+", true FROM log_leaves WHERE site = $1 ORDER BY leaf_index", site)
	if err != nil {
		return err
	}
	defer rows.Close()
	b := leafBatcher{out: out}
	var list []byte
	for rows.Next() {
		var o leafOut
		if list, err = listLeaf(rows, list[:0], &o); err != nil {
			return err
		}
		kind := rows.RawValues()[1] // text: the same bytes in either format
		if o.w = windows[string(kind)]; o.w == nil {
			o.missing = unknownKind + string(kind)
		}
		if err := b.add(ctx, o); err != nil {
			return err
		}
	}
	if err := rows.Err(); err != nil {
		return err
	}
	return b.flush(ctx)
}
