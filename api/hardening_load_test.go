package api_test

import (
	"context"
	"net/http"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/api"
	"etchlog/db"
)

// holdLongReads locks a table that every export and audit verification reads
// and no coupon write touches (production batches), so long reads stay in
// flight holding their connections until release is called.
func holdLongReads(t *testing.T, admin *pgx.Conn, name string) (release func()) {
	t.Helper()
	ctx := context.Background()
	cfg := admin.Config().Copy()
	cfg.Database = name
	conn, err := pgx.ConnectConfig(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	tx, err := conn.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := tx.Exec(ctx, "LOCK TABLE production_batches IN ACCESS EXCLUSIVE MODE"); err != nil {
		t.Fatal(err)
	}
	var once sync.Once
	release = func() {
		once.Do(func() {
			_ = tx.Rollback(ctx)
			conn.Close(ctx)
		})
	}
	t.Cleanup(release)
	return release
}

// waitLockWaiters waits until n sessions of the database wait on a lock.
func waitLockWaiters(t *testing.T, admin *pgx.Conn, name string, n int) {
	t.Helper()
	for deadline := time.Now().Add(10 * time.Second); ; time.Sleep(20 * time.Millisecond) {
		var got int
		if err := admin.QueryRow(context.Background(), `SELECT count(*) FROM pg_stat_activity
			WHERE datname = $1 AND wait_event_type = 'Lock'`, name).Scan(&got); err != nil {
			t.Fatal(err)
		}
		if got >= n {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("%d sessions wait on the lock after 10 s, want %d", got, n)
		}
	}
}

// TestLongReadsDoNotStarveWrites holds 16 exports and 16 audit verifications
// in flight (more than every connection of the pool) and records a coupon
// meanwhile: long reads have connections of their own, so the write is
// answered 201 while they wait, and every long read completes afterwards.
func TestLongReadsDoNotStarveWrites(t *testing.T) {
	e, name, admin, _ := freshEnvWith(t, api.Options{PerUser: 64}, nil)
	proc := e.procedure()
	release := holdLongReads(t, admin, name)
	var wg sync.WaitGroup
	statuses := make(chan int, 32)
	for i := 0; i < 32; i++ {
		path := "/v1/export"
		if i%2 == 1 {
			path = "/v1/audit/verify"
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			status, _, body, err := e.send(http.MethodGet, path, "auditor", nil)
			if err != nil {
				t.Error(err)
				return
			}
			if path == "/v1/export" && !strings.Contains(string(body), `"kind":"summary"`) {
				t.Errorf("export ended without its summary line")
			}
			statuses <- status
		}()
	}
	waitLockWaiters(t, admin, name, db.LongReadConns)
	done := make(chan reply, 1)
	go func() { done <- e.do(http.MethodPost, "/v1/coupons", "technician", couponBody(proc, "", uniq("C"))) }()
	select {
	case r := <-done:
		if r.status != http.StatusCreated {
			t.Errorf("coupon write while 32 long reads wait = %d %s, want 201", r.status, r.body)
		}
	case <-time.After(20 * time.Second):
		t.Errorf("coupon write still waiting 20 s after 32 long reads started: writes are starved")
	}
	if r := e.do(http.MethodGet, "/v1/coupons?limit=5", "auditor", nil); r.status != http.StatusOK {
		t.Errorf("list while long reads wait = %d, want 200", r.status)
	}
	release()
	wg.Wait()
	close(statuses)
	for s := range statuses {
		if s != http.StatusOK {
			t.Errorf("a long read answered %d after the lock was released, want 200", s)
		}
	}
}

// TestPerUserLimit lets one user hold two requests in flight with a limit of
// two: the third is 429 with Retry-After (RFC 6585 section 4); another user
// is not held up, and the user is admitted again once a request ends.
func TestPerUserLimit(t *testing.T) {
	e, name, admin, _ := freshEnvWith(t, api.Options{PerUser: 2}, nil)
	release := holdLongReads(t, admin, name)
	var wg sync.WaitGroup
	for i := 0; i < 2; i++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			if status, _, b, err := e.send(http.MethodGet, "/v1/export", "auditor", nil); err != nil || status != http.StatusOK {
				t.Errorf("held export = %d %v %.200s, want 200", status, err, b)
			}
		}()
	}
	waitLockWaiters(t, admin, name, 2)
	status, h, b, err := e.send(http.MethodGet, "/v1/coupons", "auditor", nil)
	if err != nil || status != http.StatusTooManyRequests || h.Get("Retry-After") == "" || h.Get("Content-Type") != "application/problem+json" {
		t.Errorf("third request of one user = %d Retry-After %q %s (%v), want 429 problem+json with Retry-After", status, h.Get("Retry-After"), b, err)
	}
	if r := e.do(http.MethodGet, "/v1/coupons", "technician", nil); r.status != http.StatusOK {
		t.Errorf("another user's request = %d, want 200", r.status)
	}
	release()
	wg.Wait()
	if r := e.do(http.MethodGet, "/v1/coupons", "auditor", nil); r.status != http.StatusOK {
		t.Errorf("the user's request after the others ended = %d, want 200", r.status)
	}
}

// TestExportOutlivesWriteTimeout runs an export on a server whose write
// timeout is 100 ms while the export is held up for 600 ms in the middle: the
// export moves its own write deadline as lines go out, so it completes with
// its summary line instead of being cut.
func TestExportOutlivesWriteTimeout(t *testing.T) {
	// No fixture records: any write would have to finish within the timeout
	// too. The built-in rule sets are exported before the held table.
	e, name, admin, _ := freshEnvWith(t, api.Options{}, func(hs *http.Server) { hs.WriteTimeout = 100 * time.Millisecond })
	release := holdLongReads(t, admin, name)
	go func() {
		waitLockWaiters(t, admin, name, 1)
		time.Sleep(600 * time.Millisecond)
		release()
	}()
	status, _, body, err := e.send(http.MethodGet, "/v1/export", "auditor", nil)
	if err != nil || status != http.StatusOK || !strings.Contains(string(body), `"kind":"summary"`) {
		t.Errorf("export held past the write timeout = %d %v, %d bytes, summary line present %v; want 200 and complete",
			status, err, len(body), strings.Contains(string(body), `"kind":"summary"`))
	}
}
