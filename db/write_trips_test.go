package db_test

import (
	"context"
	"crypto/sha256"
	"fmt"
	"strings"
	"sync"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// tripCounter counts what a store sends to PostgreSQL: each Exec or Query,
// each batch (one round trip however many statements it carries) and each
// COPY, and the statements inside batches.
type tripCounter struct {
	mu                             sync.Mutex
	queries, batches, copies, stmt int
	log                            []string
}

func (t *tripCounter) TraceQueryStart(ctx context.Context, _ *pgx.Conn, d pgx.TraceQueryStartData) context.Context {
	t.mu.Lock()
	t.queries++
	t.stmt++
	t.log = append(t.log, "query: "+oneLine(d.SQL))
	t.mu.Unlock()
	return ctx
}

func (t *tripCounter) TraceQueryEnd(context.Context, *pgx.Conn, pgx.TraceQueryEndData) {}

func (t *tripCounter) TraceBatchStart(ctx context.Context, _ *pgx.Conn, d pgx.TraceBatchStartData) context.Context {
	t.mu.Lock()
	t.batches++
	t.log = append(t.log, fmt.Sprintf("batch of %d:", d.Batch.Len()))
	t.mu.Unlock()
	return ctx
}

func (t *tripCounter) TraceBatchQuery(_ context.Context, _ *pgx.Conn, d pgx.TraceBatchQueryData) {
	t.mu.Lock()
	t.stmt++
	t.log = append(t.log, "  - "+oneLine(d.SQL))
	t.mu.Unlock()
}

func (t *tripCounter) TraceBatchEnd(context.Context, *pgx.Conn, pgx.TraceBatchEndData) {}

func (t *tripCounter) TraceCopyFromStart(ctx context.Context, _ *pgx.Conn, d pgx.TraceCopyFromStartData) context.Context {
	t.mu.Lock()
	t.copies++
	t.stmt++
	t.log = append(t.log, "copy: "+d.TableName.Sanitize())
	t.mu.Unlock()
	return ctx
}

func (t *tripCounter) TraceCopyFromEnd(context.Context, *pgx.Conn, pgx.TraceCopyFromEndData) {}

// reset zeroes the counts.
func (t *tripCounter) reset() {
	t.mu.Lock()
	defer t.mu.Unlock()
	t.queries, t.batches, t.copies, t.stmt, t.log = 0, 0, 0, 0, nil
}

// trips is the number of round trips counted: a COPY takes two (its
// columns' description, then the data).
func (t *tripCounter) trips() int {
	t.mu.Lock()
	defer t.mu.Unlock()
	return t.queries + t.batches + 2*t.copies
}

func oneLine(sql string) string {
	s := strings.Join(strings.Fields(sql), " ")
	if len(s) > 110 {
		s = s[:110] + "…"
	}
	return s
}

// TestCouponWriteRoundTrips counts the round trips and statements of one
// coupon create and one correction through the service's store, after a
// warm-up write (so pgx's statement cache holds every statement and no
// round trip is a Prepare, and the store keeps what the procedure's coupons
// are judged by), and logs each statement with -v. A create waits for
// PostgreSQL once: BEGIN, the flag lock, the row's INSERT, one statement
// that claims the mark, writes the pending leaf and fails unless the
// procedure's count of judgement changes is the kept one, and COMMIT, which
// that failure keeps from taking effect (before this, COMMIT waited for the
// count in a round trip of its own); a correction three times: for the
// record lock and the base revision it checks first, and it reads the
// procedure, its ranges and its group's activations. (Before the writes
// were pipelined a create took 17 round trips; before the mark, row and
// leaf left as one statement and the activations brought whether the
// process was ever calibrated, 10 statements; before the judged inputs were
// kept, 7; the row's INSERT left the mark's statement again, as a fifth,
// when one statement of the three tables made every create grow the
// server's heap and give it back: recordStatements. The flag lock went into
// the row's INSERT, and a request's token check, a statement of its own
// before, into the mark's: 4 with or without the check.)
func TestCouponWriteRoundTrips(t *testing.T) {
	ctx := context.Background()
	s, tr, site, p := countedProcedure(t)
	token := "round-trip-token-" + site
	u := db.User{Site: site, Name: "tilde", Role: db.RoleTechnician}
	if err := dbtest.Owner(t).PutUser(ctx, u, token); err != nil {
		t.Fatal(err)
	}
	digest := sha256.Sum256([]byte(token))
	var c db.Coupon
	var err error
	createStmt := map[bool]int{}
	for _, checked := range []bool{false, true} {
		for i := range 2 { // the first create warms the statement cache
			tr.reset()
			wctx, check := ctx, (*db.UserCheck)(nil)
			if checked { // a request let in on a kept lookup of its token
				wctx, check = db.WithUserCheck(ctx, digest[:], u)
			}
			if c, err = s.CreateCoupon(wctx, actor(site), couponData(p.ID, fmt.Sprint("RT-", checked, i))); err != nil {
				t.Fatal(err)
			}
			if checked && !check.Confirmed() {
				t.Error("a create with a token check committed without confirming its user")
			}
		}
		if create := tr.trips(); create > 1 {
			t.Errorf("a create (token check %v) took %d round trips (want 1)", checked, create)
		}
		createStmt[checked] = tr.stmt
		t.Logf("create (token check %v): %d round trips, %d statements\n%s", checked, tr.trips(), tr.stmt, strings.Join(tr.log, "\n"))
	}
	for i := range 2 {
		tr.reset()
		if c, err = s.CorrectCoupon(ctx, actor(site), c.ID, db.Change{BaseRevision: c.Revision, Reason: "mark misread"},
			couponData(p.ID, fmt.Sprint("RT-C-", i))); err != nil {
			t.Fatal(err)
		}
	}
	correct := tr.trips()
	t.Logf("correct: %d round trips, %d statements\n%s", correct, tr.stmt, strings.Join(tr.log, "\n"))
	if correct > 3 {
		t.Errorf("a correction took %d round trips (want at most 3)", correct)
	}
	if createStmt[false] > 4 || createStmt[true] > 4 || tr.stmt > 14 {
		t.Errorf("a create sent %d statements, %d with a token check (want at most 4), a correction %d (want at most 14)",
			createStmt[false], createStmt[true], tr.stmt)
	}
}

// countedProcedure is a counted store (countedStore) on the test database,
// a site of the test's own and a procedure there.
func countedProcedure(t *testing.T) (*db.Store, *tripCounter, string, db.Procedure) {
	t.Helper()
	dbtest.Store(t)
	s, tr := countedStore(t)
	site := dbtest.Site(t)
	return s, tr, site, mustProcedure(t, s, site)
}

// countedStore opens a Store of its own on the test database (a second
// process's pool, as far as the database can tell), with a tripCounter
// watching each of its statements; it closes when the test ends.
func countedStore(t *testing.T) (*db.Store, *tripCounter) {
	t.Helper()
	tr := &tripCounter{}
	s, err := db.OpenTraced(context.Background(), dbtest.AppURL(t), tr)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(s.Close)
	if err := s.SetLogKey(dbtest.PrivateKey); err != nil {
		t.Fatal(err)
	}
	return s, tr
}

// TestDayWalkUsesGenericPlan: a coupons page by welding days alone is read
// with its statement's generic plan (the page's transaction sets
// plan_cache_mode in the same round trip as the page), and other coupons
// pages are not; both answer the same coupons as listed in log order.
func TestDayWalkUsesGenericPlan(t *testing.T) {
	ctx := context.Background()
	s, tr, site, p := countedProcedure(t)
	var marks []string
	for i := range 3 {
		c, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprint("GP-", i)))
		if err != nil {
			t.Fatal(err)
		}
		marks = append(marks, c.CouponMark)
	}
	if err := s.AwaitLogged(ctx, site); err != nil { // the lists then read in one round trip
		t.Fatal(err)
	}
	from := db.DateOf(couponData(p.ID, "").WeldedOn.AddDate(0, 0, -40))
	for _, c := range []struct {
		name    string
		f       db.CouponFilter
		generic bool
	}{
		{"welding days", db.CouponFilter{WeldedFrom: &from}, true},
		{"welding days and welder", db.CouponFilter{WeldedFrom: &from, WelderID: couponData(p.ID, "").WelderID}, false},
		{"none", db.CouponFilter{}, false},
	} {
		tr.reset()
		page, err := s.Coupons(ctx, site, c.f, "", 50)
		if err != nil {
			t.Fatal(err)
		}
		got := marksOf(page.Items)
		if fmt.Sprint(got) != fmt.Sprint(marks) {
			t.Errorf("%s: coupons %v, want %v", c.name, got, marks)
		}
		sent := strings.Join(tr.log, "\n")
		if generic := strings.Contains(sent, "plan_cache_mode = force_generic_plan"); generic != c.generic || tr.trips() != 1 {
			t.Errorf("%s: generic plan %v (want %v) in %d round trips (want 1):\n%s", c.name, generic, c.generic, tr.trips(), sent)
		}
	}
}
