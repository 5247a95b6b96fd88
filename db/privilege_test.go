package db_test

import (
	"context"
	"errors"
	"net/url"
	"strings"
	"testing"

	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/predict"
)

// TestServiceLoginCannotTamper runs, from the service's own connection pool,
// the statements a compromised or buggy service would need to change history:
// each is refused by PostgreSQL's privilege system (SQLSTATE 42501,
// insufficient_privilege, PostgreSQL manual, appendix A), not by etchlog code.
func TestServiceLoginCannotTamper(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	if _, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, "C-PRIV-1")); err != nil {
		t.Fatal(err)
	}
	var login string
	var super bool
	if err := s.Pool().QueryRow(ctx, `SELECT session_user, rolsuper FROM pg_roles WHERE rolname = session_user`).Scan(&login, &super); err != nil {
		t.Fatal(err)
	}
	if login != db.AppRole || super {
		t.Fatalf("service login = %s (superuser %v), want %s, not a superuser", login, super, db.AppRole)
	}
	for _, q := range []string{
		"ALTER TABLE coupons DISABLE TRIGGER coupons_append_only",
		"ALTER TABLE audit_events DISABLE TRIGGER ALL",
		"ALTER TABLE api_users DISABLE TRIGGER api_users_append_only",
		"UPDATE api_users SET role = 'engineer'",
		"INSERT INTO api_users (site, id, revision, created_at, created_by, name, role, token_sha256) VALUES ('x', gen_random_uuid(), 1, now(), 'x', 'x', 'engineer', '\\x00')",
		"UPDATE coupons SET current_a = 1 WHERE site = '" + site + "'",
		"DELETE FROM coupons WHERE site = '" + site + "'",
		"DELETE FROM audit_events WHERE site = '" + site + "'",
		"UPDATE audit_events SET reason = 'x' WHERE site = '" + site + "'",
		"DELETE FROM log_leaves WHERE site = '" + site + "'",
		"UPDATE log_leaves SET reason = 'x' WHERE site = '" + site + "'",
		"UPDATE log_nodes SET hash = hash WHERE site = '" + site + "'",
		"DELETE FROM log_checkpoints WHERE site = '" + site + "'",
		"UPDATE log_pending SET tag = NULL",
		"TRUNCATE coupons",
		"UPDATE flags SET detail = 'x'",
		"ALTER TABLE coupons ADD COLUMN sneaky text",
		"DROP TABLE coupons",
		"CREATE TABLE public.sneaky (x int)",
		"CREATE OR REPLACE FUNCTION etchlog_append_only() RETURNS trigger LANGUAGE plpgsql AS $$ BEGIN RETURN NEW; END $$",
		"SET ROLE " + db.OwnerRole,
		"INSERT INTO schema_migrations (version, dirty) VALUES (999, false)",
	} {
		_, err := s.Pool().Exec(ctx, q)
		var pg *pgconn.PgError
		if !errors.As(err, &pg) || pg.Code != pgerrcode.InsufficientPrivilege {
			t.Errorf("service: %s\n  err = %v, want insufficient_privilege (42501)", q, err)
		}
	}
}

// TestServiceGrants lists what the service's role may do on every table:
// SELECT and INSERT on records and logs; DELETE in addition only on the
// derived tables, which a test recomputes from the records
// (TestFlagsAreDerived, TestCouponListIsDerived); on users and the schema version, SELECT only; on
// the idempotency keys (bookkeeping, no record) also UPDATE and DELETE.
func TestServiceGrants(t *testing.T) {
	t.Parallel()
	conn := superuser(t)
	rows, _ := conn.Query(context.Background(), `
		SELECT c.relname, string_agg(p.priv, ',' ORDER BY p.priv)
		FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
		CROSS JOIN unnest(ARRAY['SELECT','INSERT','UPDATE','DELETE','TRUNCATE','REFERENCES','TRIGGER']) p(priv)
		WHERE n.nspname = 'public' AND c.relkind IN ('r', 'p')
		  AND has_table_privilege($1, c.oid, p.priv)
		GROUP BY c.relname`, db.AppRole)
	got := map[string]string{}
	for rows.Next() {
		var table, privs string
		if err := rows.Scan(&table, &privs); err != nil {
			t.Fatal(err)
		}
		got[table] = privs
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	derived := map[string]bool{"flags": true, "current_marks": true, "coupon_list": true, "section_list": true, "production_list": true, "sign_off_list": true, "qualification_list": true, "procedure_list": true, "drift_points": true, "drift_charts": true}
	// Detachments of production months are written by an administrator
	// (etchlog_detach_production_month, as the owner).
	readOnly := map[string]bool{"api_users": true, "schema_migrations": true, "production_detachments": true}
	// Bookkeeping that is no record and not exported: a retry's remembered
	// answer is filled in after the write and forgotten after 24 hours.
	bookkeeping := map[string]bool{"idempotency_keys": true}
	// The log sequencer's queues: committed pending leaves are deleted once
	// they are in the tree, and the production records' list columns once
	// they are in production_list.
	queue := map[string]bool{"log_pending": true, "production_list_pending": true}
	for table, privs := range got {
		want := "INSERT,SELECT"
		switch {
		case bookkeeping[table]:
			want = "DELETE,INSERT,SELECT,UPDATE"
		case derived[table], queue[table]:
			want = "DELETE,INSERT,SELECT"
		case readOnly[table]:
			want = "SELECT"
		}
		if privs != want {
			t.Errorf("%s on %s: %s, want %s", db.AppRole, table, privs, want)
		}
	}
	for _, table := range []string{"coupons", "audit_events", "api_users", "flags"} {
		if got[table] == "" {
			t.Errorf("%s has no privilege on %s", db.AppRole, table)
		}
	}
	var owners []string
	orows, _ := conn.Query(context.Background(), `
		SELECT DISTINCT pg_get_userbyid(c.relowner) FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
		WHERE n.nspname = 'public' AND c.relkind IN ('r', 'p', 'S', 'v', 'm')`)
	owners, err := pgx.CollectRows(orows, pgx.RowTo[string])
	if err != nil || len(owners) != 1 || owners[0] != db.OwnerRole {
		t.Errorf("owners of the schema's tables = %v (err %v), want only %s", owners, err, db.OwnerRole)
	}
}

// TestOpenRefusesPrivilegedLogin: the service does not start on a superuser's
// login, nor on the owner role.
func TestOpenRefusesPrivilegedLogin(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	if s, err := db.Open(ctx, dbtest.URL(t), 0); !errors.Is(err, db.ErrPrivilegedLogin) {
		if s != nil {
			s.Close()
		}
		t.Errorf("Open(superuser) err = %v, want ErrPrivilegedLogin", err)
	}
	u, _ := url.Parse(dbtest.URL(t))
	u.RawQuery += "&options=-c%20role%3D" + db.OwnerRole
	if s, err := db.Open(ctx, u.String(), 0); !errors.Is(err, db.ErrPrivilegedLogin) {
		if s != nil {
			s.Close()
		}
		t.Errorf("Open(as %s) err = %v, want ErrPrivilegedLogin", db.OwnerRole, err)
	}
}

// TestUserChangesAreAudited: creating a user and changing its role are
// revisions with audit events; the old token stops working; a role promoted
// by SQL behind the service's back (triggers disabled by a superuser) is
// reported by verify.
func TestUserChangesAreAudited(t *testing.T) {
	t.Parallel()
	s, owner, site, ctx := dbtest.Store(t), dbtest.Owner(t), dbtest.Site(t), context.Background()
	if err := s.PutUser(ctx, db.User{Site: site, Name: "sneaky", Role: db.RoleEngineer}, "a-token-of-sixteen-chars"); err == nil {
		t.Error("the service added a user; want refused (users are written by an administrator)")
	}
	u := db.User{Site: site, Name: "tove", Role: db.RoleTechnician}
	if err := owner.PutUser(ctx, u, "tove-first-token-0001"); err != nil {
		t.Fatal(err)
	}
	if err := owner.PutUser(ctx, u, "tove-first-token-0001"); err != nil { // the same again changes nothing
		t.Fatal(err)
	}
	if err := owner.PutUser(ctx, db.User{Site: site, Name: "tove", Role: db.RoleEngineer}, "tove-first-token-0001"); !errors.Is(err, db.ErrConflict) {
		t.Errorf("role change with the old token: err = %v, want ErrConflict (a token is never reused)", err)
	}
	u.Role = db.RoleEngineer
	if err := owner.PutUser(ctx, u, "tove-second-token-002"); err != nil {
		t.Fatal(err)
	}
	if _, err := s.UserByToken(ctx, "tove-first-token-0001"); !errors.Is(err, db.ErrNotFound) {
		t.Errorf("old token after the change: err = %v, want ErrNotFound", err)
	}
	if got, err := s.UserByToken(ctx, "tove-second-token-002"); err != nil || got.Role != db.RoleEngineer {
		t.Errorf("new token: %+v, %v; want engineer", got, err)
	}
	ev := auditEvents(t, s, site, db.AuditFilter{Entity: "user"})
	if len(ev) != 2 || ev[0].Action != "create" || ev[1].Action != "correct" || ev[1].Reason == "" {
		t.Fatalf("user log entries = %+v; want create then correct with a reason", ev)
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Fatalf("verify before tampering: %+v, %v", v, err)
	}

	if err := owner.PutUser(ctx, db.User{Site: site, Name: "quiet", Role: db.RoleTechnician}, "quiet-token-000000001"); err != nil {
		t.Fatal(err)
	}
	conn := superuser(t)
	if _, err := conn.Exec(ctx, `ALTER TABLE api_users DISABLE TRIGGER api_users_append_only;
		UPDATE api_users SET role = 'engineer' WHERE site = '`+site+`' AND name = 'quiet';
		ALTER TABLE api_users ENABLE TRIGGER api_users_append_only;`); err != nil {
		t.Fatal(err)
	}
	v, err := s.VerifyLog(ctx, site, nil)
	if err != nil || v.OK || !strings.Contains(strings.Join(v.Problems, "\n"), "user") {
		t.Errorf("verify after a role promotion by SQL: %+v, %v; want a problem naming the user", v, err)
	}
}

// TestMigrateDownRefusesRecords: rolling the schema back destroys records, so
// it is refused while any exist unless the caller names the database.
func TestMigrateDownRefusesRecords(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	name, u := scratchDatabase(t)
	if err := db.Setup(ctx, u); err != nil {
		t.Fatal(err)
	}
	app, _ := db.AppURL(u)
	s, err := db.Open(ctx, app, 0)
	if err != nil {
		t.Fatal(err)
	}
	if err := s.SetLogKey(dbtest.PrivateKey); err != nil {
		t.Fatal(err)
	}
	_, err = s.CreateProcedure(ctx, actor("down"), procedureData("WPS-DOWN-1"))
	s.Close()
	if err != nil {
		t.Fatal(err)
	}
	for _, destroy := range []string{"", "etchlog", name + "x"} {
		if err := db.MigrateDown(u, destroy); !errors.Is(err, db.ErrRecordsExist) {
			t.Errorf("MigrateDown(destroy %q) with a procedure stored: err = %v, want ErrRecordsExist", destroy, err)
		}
	}
	if err := db.Migrate(u, "down"); !errors.Is(err, db.ErrRecordsExist) {
		t.Errorf(`Migrate("down") with a procedure stored: err = %v, want ErrRecordsExist`, err)
	}
	if err := db.MigrateDown(u, name); err != nil {
		t.Fatalf("MigrateDown(destroy %q): %v", name, err)
	}
	conn, err := pgx.Connect(ctx, u)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	var left bool
	if err := conn.QueryRow(ctx, `SELECT to_regclass('public.procedures') IS NOT NULL`).Scan(&left); err != nil || left {
		t.Errorf("after the named roll-back the procedures table exists: %v (err %v)", left, err)
	}
}

// TestFlagsAreDerived recomputes a site's flags from its records and finds
// exactly the stored ones; a flag deleted behind the service's back shows.
func TestFlagsAreDerived(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	if _, err := s.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	for i, amps := range []float64{185, 215, 231} {
		if _, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, p.Code+"-"+string(rune('A'+i)), amps, 24)); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := s.CreateProductionRecords(ctx, a, []db.ProductionRecordData{productionRow(p.ID, "W1", 190), productionRow(p.ID, "W2", 230)}); err != nil {
		t.Fatal(err)
	}
	if _, err := s.NarrowRanges(ctx, a, p.ID, 1, "customer limits current", []predict.Narrowing{{Variable: predict.VarCurrent, Max: ptr(210.0)}}); err != nil {
		t.Fatal(err)
	}
	c, err := s.RecheckFlags(ctx, site)
	if err != nil || !c.OK() || c.Stored == 0 {
		t.Fatalf("RecheckFlags = %+v, %v; want the stored flags (more than none) exactly", c, err)
	}
	if _, err := superuser(t).Exec(ctx, `DELETE FROM flags WHERE site = $1 AND subject_kind = 'production_record'`, site); err != nil {
		t.Fatal(err)
	}
	c, err = s.RecheckFlags(ctx, site)
	if err != nil || c.OK() || len(c.Missing) == 0 {
		t.Errorf("RecheckFlags after deleting a flag = %+v, %v; want it missing", c, err)
	}
}

// scratchDatabase creates an empty database of the test's own on the test
// server (dbtest.EmptyDatabase, dropped at the end); it returns the name and
// the superuser URL.
func scratchDatabase(t *testing.T) (string, string) {
	t.Helper()
	u := dbtest.EmptyDatabase(t)
	parsed, err := url.Parse(u)
	if err != nil {
		t.Fatal(err)
	}
	return strings.TrimPrefix(parsed.Path, "/"), u
}
