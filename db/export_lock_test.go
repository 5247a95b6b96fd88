package db_test

import (
	"context"
	"errors"
	"fmt"
	"testing"
	"time"

	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5/pgconn"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/db/logfmt"
)

// TestExportBesideQueuedLock checks that an export finishes, every leaf
// with its row, when a request for a record table's exclusive lock (here a
// superuser's TRUNCATE, which the append-only trigger then refuses) queues
// behind it after it has read the records: the export's transaction holds
// that table's lock, so a second connection that asked for it next would
// queue behind the TRUNCATE while the export waits for it, a wait
// PostgreSQL's deadlock check cannot see.
//
// Not parallel: the queued TRUNCATE stalls every other transaction that
// reads coupons until the export ends.
func TestExportBesideQueuedLock(t *testing.T) {
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	for i := range 3 {
		if _, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprint("Q-", i))); err != nil {
			t.Fatal(err)
		}
	}
	mustLogged(t, s, site)
	var truncated <-chan error
	db.SetExportHookForTest(func(s string) {
		if s != site {
			return
		}
		truncated = queueTruncate(t, "coupons")
	})
	defer db.SetExportHookForTest(nil)
	ectx, cancel := context.WithTimeout(ctx, 60*time.Second)
	defer cancel()
	missing := 0
	sum, err := s.Export(ectx, site, func(kind string, v any) error {
		if l, ok := v.(logfmt.ExportLeaf); ok && kind == logfmt.LineLeaf && (l.Missing != "" || l.Fields == nil) {
			missing++
		}
		return nil
	})
	if err != nil {
		t.Fatalf("export beside a queued TRUNCATE: %v (want it to finish)", err)
	}
	if sum.Leaves < 4 || missing != 0 {
		t.Errorf("export: %d leaves, %d without their row; want every leaf (procedure and 3 coupons) with its row", sum.Leaves, missing)
	}
	var pg *pgconn.PgError
	if err := <-truncated; !errors.As(err, &pg) || pg.Code != pgerrcode.InsufficientPrivilege {
		t.Errorf("TRUNCATE after the export: %v, want the append-only refusal", err)
	}
}

// queueTruncate starts a superuser's TRUNCATE table CASCADE and returns
// once it waits for a lock (its result comes on the channel): called while
// a transaction of the test holds that table's lock, it leaves an exclusive
// lock request queued behind that transaction.
func queueTruncate(t *testing.T, table string) <-chan error {
	t.Helper()
	ctx := context.Background()
	conn, watch := superuser(t), superuser(t)
	done := make(chan error, 1)
	var pid int32
	if err := conn.QueryRow(ctx, `SELECT pg_backend_pid()`).Scan(&pid); err != nil {
		t.Error(err)
		done <- err
		return done
	}
	go func() {
		_, err := conn.Exec(ctx, "TRUNCATE "+table+" CASCADE")
		done <- err
	}()
	for range 200 {
		var waiting bool
		if err := watch.QueryRow(ctx, `SELECT coalesce(wait_event_type = 'Lock', false) FROM pg_stat_activity WHERE pid = $1`, pid).
			Scan(&waiting); err != nil {
			t.Error(err)
			return done
		}
		if waiting {
			return done
		}
		time.Sleep(25 * time.Millisecond)
	}
	t.Errorf("the TRUNCATE of %s never waited for a lock", table)
	return done
}
