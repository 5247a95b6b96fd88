package db_test

import (
	"context"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// openStore opens another service store on the package's database, as a
// second etchlog process would, signing with the same key.
func openStore(t *testing.T) *db.Store {
	t.Helper()
	app, err := db.AppURL(dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	s, err := db.Open(context.Background(), app, 0)
	if err != nil {
		t.Fatal(err)
	}
	if err := s.SetLogKey(dbtest.PrivateKey); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(s.Close)
	return s
}

// leader names the backend holding the sequencer's session lock, or 0.
func leader(t *testing.T, conn *pgx.Conn) int {
	t.Helper()
	var pid int
	err := conn.QueryRow(context.Background(), `SELECT coalesce(max(l.pid), 0) FROM pg_locks l
		WHERE l.locktype = 'advisory' AND l.granted AND l.database = (SELECT oid FROM pg_database WHERE datname = current_database())
		  AND l.objid = (hashtextextended('etchlog-log-sequencer', 0) & 4294967295)::oid`).Scan(&pid)
	if err != nil {
		t.Fatal(err)
	}
	return pid
}

// TestSequencerTakeover runs the log sequencer in two more "processes" on
// the package's database while the package's own sequencer runs: exactly
// one backend holds the leader lock at any time. Killing the leader's
// database session (as a crash would) hands the work to another within its
// retry interval: writes made afterwards are logged and the log verifies.
func TestSequencerTakeover(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	conn := superuser(t)
	for range 2 {
		other := openStore(t)
		octx, stop := context.WithCancel(ctx)
		t.Cleanup(stop)
		go other.RunSequencer(octx, db.SequencerOptions{Retry: 50 * time.Millisecond}) //nolint:errcheck // ends with the test
	}
	p := mustProcedure(t, s, site)
	for round := range 3 {
		first := waitLeader(t, conn, 0)
		var holders int
		if err := conn.QueryRow(ctx, `SELECT count(*) FROM pg_locks WHERE locktype = 'advisory' AND granted
			AND objid = (hashtextextended('etchlog-log-sequencer', 0) & 4294967295)::oid
			AND database = (SELECT oid FROM pg_database WHERE datname = current_database())`).Scan(&holders); err != nil || holders != 1 {
			t.Fatalf("round %d: %d backends hold the sequencer lock (err %v), want exactly 1", round, holders, err)
		}
		// The leader dies: its session ends without a word.
		if _, err := conn.Exec(ctx, `SELECT pg_terminate_backend($1)`, first); err != nil {
			t.Fatal(err)
		}
		next := waitLeader(t, conn, first)
		if next == first {
			t.Fatalf("round %d: backend %d still leads after it was terminated", round, first)
		}
		c, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("C-TKO-%d", round)))
		if err != nil {
			t.Fatal(err)
		}
		mustLogged(t, s, site)
		if _, err := s.Inclusion(ctx, site, "coupon", c.ID, 1); err != nil {
			t.Fatalf("round %d: coupon written after the takeover is not in the log: %v", round, err)
		}
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Errorf("VerifyLog after three takeovers = %+v (err %v), want ok", v, err)
	}
}

// waitLeader waits up to 5 s for a leader other than not and returns it.
func waitLeader(t *testing.T, conn *pgx.Conn, not int) int {
	t.Helper()
	deadline := time.Now().Add(5 * time.Second)
	for time.Now().Before(deadline) {
		if pid := leader(t, conn); pid != 0 && pid != not {
			return pid
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatalf("no sequencer leader (other than backend %d) within 5 s", not)
	return 0
}

// TestAddedColumnKeepsOldLeaves adds a column to the coupon table (as a
// later migration would) after coupons were logged: the leaves commit to
// the kind's explicit field list, so every old leaf still verifies, and a
// coupon written after the change is logged and verifies too.
func TestAddedColumnKeepsOldLeaves(t *testing.T) {
	// Not parallel: it takes table-wide locks (ALTER TABLE, TRUNCATE) that
	// can make another test's write a deadlock victim.
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	c, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, "C-COL-1"))
	if err != nil {
		t.Fatal(err)
	}
	mustLogged(t, s, site)
	conn := superuser(t)
	// A column with a default fills every existing row; other tests' rows too,
	// which is what a migration does. IF NOT EXISTS keeps reruns harmless.
	if _, err := conn.Exec(ctx, `ALTER TABLE coupons ADD COLUMN IF NOT EXISTS gas_flow_l_min double precision DEFAULT 15`); err != nil {
		t.Fatal(err)
	}
	if _, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, "C-COL-2")); err != nil {
		t.Fatal(err)
	}
	mustLogged(t, s, site)
	v, err := s.VerifyLog(ctx, site, nil)
	if err != nil || !v.OK || v.Leaves < 3 {
		t.Errorf("VerifyLog after adding a column = %+v (err %v), want ok over every leaf", v, err)
	}
	f, err := s.Fact(ctx, "coupon", site, c.ID, 1)
	if err != nil {
		t.Fatal(err)
	}
	for _, fl := range f.Fields {
		if strings.Contains(fl.Name, "gas_flow") {
			t.Errorf("coupon fact version %d encodes the added column %s", f.Version, fl.Name)
		}
	}
}
