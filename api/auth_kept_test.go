package api_test

import (
	"context"
	"fmt"
	"net/http"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestKeptUserFollowsChanges changes the user of a token between requests,
// as the administrator does, and checks that the very next request sees
// each change: a create (let in on the user a lookup of its token found
// before, confirmed by its write) and a list (looked up afresh). A revoked
// or replaced token must stop working at once, and a role change must take
// effect at once (common practice for bearer tokens, no source). Nothing is
// written by a refused request.
func TestKeptUserFollowsChanges(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	ctx := context.Background()
	owner := dbtest.Owner(t)
	proc := e.mustProcedure()
	created := 0
	create := func(what string, want int) {
		t.Helper()
		r := e.do(http.MethodPost, "/v1/coupons", "technician", couponBody(proc, "", fmt.Sprint("KEPT-", created)))
		if r.status != want {
			t.Fatalf("%s: POST /v1/coupons = %d %s, want %d", what, r.status, r.body, want)
		}
		if want == http.StatusCreated {
			created++
		}
	}
	list := func(what string, want int) {
		t.Helper()
		if r := e.do(http.MethodGet, "/v1/coupons?limit=1", "technician", nil); r.status != want {
			t.Fatalf("%s: GET /v1/coupons = %d %s, want %d", what, r.status, r.body, want)
		}
	}
	create("first create (looked up)", http.StatusCreated)
	create("second create (kept)", http.StatusCreated)

	// Every change of a user comes with a new token (a digest is held by one revision only).
	put := func(what, role string) {
		t.Helper()
		token, err := db.NewToken()
		if err != nil {
			t.Fatal(err)
		}
		if err := owner.PutUser(ctx, db.User{Site: e.site, Name: userName("technician"), Role: role}, token); err != nil {
			t.Fatal(err)
		}
		create(what+", old token", http.StatusUnauthorized)
		list(what+", old token", http.StatusUnauthorized)
		e.tokens["technician"] = token
	}
	put("an auditor now", db.RoleAuditor)
	create("as an auditor", http.StatusForbidden)
	list("as an auditor", http.StatusOK)
	put("an engineer now", db.RoleEngineer)
	create("as an engineer", http.StatusCreated)
	create("as an engineer (kept)", http.StatusCreated)
	put("a technician again", db.RoleTechnician)
	create("new token", http.StatusCreated)
	create("new token (kept)", http.StatusCreated)

	if _, err := owner.Pool().Exec(ctx, `
		INSERT INTO api_users (site, id, revision, created_at, created_by, name, role, token_sha256, reason, voided)
		SELECT site, id, revision + 1, now(), $3, name, role, sha256(token_sha256), 'revoked for the test', true
		FROM api_users WHERE site = $1 AND name = $2 ORDER BY revision DESC LIMIT 1`,
		e.site, userName("technician"), db.UserAdmin); err != nil {
		t.Fatal(err)
	}
	create("revoked", http.StatusUnauthorized)
	list("revoked", http.StatusUnauthorized)

	page := decode[map[string]any](t, "list", e.do(http.MethodGet, "/v1/coupons?limit=500", "engineer", nil), http.StatusOK)
	if items, _ := page["items"].([]any); len(items) != created {
		t.Errorf("the site holds %d coupons, want the %d created", len(items), created)
	}
}

// TestKeptUserChangedBehindTheService changes a user's role in place by
// SQL, with the append-only trigger disabled (as an attacker with the
// owner's rights could), keeping the token: a create let in on the kept
// user finds the new role in its write, writes nothing as the old one, and
// is run again as the user now found. Not parallel: it alters the table.
func TestKeptUserChangedBehindTheService(t *testing.T) {
	e := newEnv(t)
	ctx := context.Background()
	proc := e.mustProcedure()
	conn, err := pgx.Connect(ctx, dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	setRole := func(role string) {
		t.Helper()
		if _, err := conn.Exec(ctx, `ALTER TABLE api_users DISABLE TRIGGER api_users_append_only;
			UPDATE api_users SET role = '`+role+`' WHERE site = '`+e.site+`' AND name = '`+userName("technician")+`';
			ALTER TABLE api_users ENABLE TRIGGER api_users_append_only`); err != nil {
			t.Fatal(err)
		}
	}
	for i, c := range []struct {
		role string
		want int
	}{
		{db.RoleTechnician, http.StatusCreated},
		{db.RoleTechnician, http.StatusCreated}, // kept
		{db.RoleEngineer, http.StatusCreated},   // the write finds an engineer: run again as one
		{db.RoleAuditor, http.StatusForbidden},  // the write finds an auditor
		{db.RoleTechnician, http.StatusCreated},
	} {
		setRole(c.role)
		if r := e.do(http.MethodPost, "/v1/coupons", "technician", couponBody(proc, "", fmt.Sprint("BEHIND-", i))); r.status != c.want {
			t.Fatalf("create %d as %s: status %d %s, want %d", i, c.role, r.status, r.body, c.want)
		}
	}
	page := decode[map[string]any](t, "list", e.do(http.MethodGet, "/v1/coupons?limit=500", "engineer", nil), http.StatusOK)
	if items, _ := page["items"].([]any); len(items) != 4 {
		t.Errorf("the site holds %d coupons, want 4", len(items))
	}
}
