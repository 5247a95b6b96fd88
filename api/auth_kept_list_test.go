package api_test

import (
	"context"
	"fmt"
	"net/http"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db/dbtest"
)

// TestKeptUserListShowsTheUsersSite moves the auditor's user to another
// site in place by SQL, with the append-only trigger disabled (as an
// attacker with the owner's rights could), keeping the token: a coupons
// page let in on the kept user reads the old site's page, finds the new
// site in the same round trip, answers nothing from it, and is read again
// for the user now found. A token must reach only its user's site at the
// moment of the request (common practice for bearer tokens, no source).
// Not parallel: it alters the table.
func TestKeptUserListShowsTheUsersSite(t *testing.T) {
	e := newEnv(t)
	ctx := context.Background()
	proc := e.mustProcedure()
	for i := range 3 {
		e.create("/v1/coupons", "technician", couponBody(proc, "", fmt.Sprint("SITE-", i)))
	}
	conn, err := pgx.Connect(ctx, dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	moveTo := func(site string) {
		t.Helper()
		err := pgx.BeginFunc(ctx, conn, func(tx pgx.Tx) error {
			for _, sql := range []string{`ALTER TABLE api_users DISABLE TRIGGER api_users_append_only`,
				`UPDATE api_users SET site = $1 WHERE token_sha256 = sha256($2::bytea)`,
				`ALTER TABLE api_users ENABLE TRIGGER api_users_append_only`} {
				var args []any
				if sql[0] == 'U' {
					args = []any{site, []byte(e.tokens["auditor"])}
				}
				if _, err := tx.Exec(ctx, sql, args...); err != nil {
					return err
				}
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	other := e.site + "-moved"
	for i, c := range []struct {
		site string
		want int // coupons on the page
	}{
		{e.site, 3}, // looked up
		{e.site, 3}, // kept
		{other, 0},  // the page's read finds the other site: read again for it
		{other, 0},  // kept
		{e.site, 3},
	} {
		moveTo(c.site)
		page := decode[map[string]any](t, "list", e.do(http.MethodGet, "/v1/coupons?limit=50", "auditor", nil), http.StatusOK)
		if items, _ := page["items"].([]any); len(items) != c.want {
			t.Fatalf("list %d on site %s: %d coupons, want %d", i, c.site, len(items), c.want)
		}
	}
}
