package db

import (
	"context"
	"errors"
	"fmt"
	"net/url"

	"github.com/jackc/pgx/v5"
)

// The two database roles etchlog uses. Roles belong to the whole PostgreSQL
// cluster, not to one database, so every etchlog database on a server shares
// them; the grants that give them meaning are made per database by the
// migrations.
const (
	// OwnerRole owns every table, function and trigger; migrations run as it.
	// It cannot log in: an administrator's login becomes it with SET ROLE
	// (the connection parameter "role"), so no service holds its password.
	OwnerRole = "etchlog_owner"
	// AppRole is the service's login. It may SELECT and INSERT on record and
	// log tables and rewrite only derived tables (flags, current marks); it
	// owns nothing, so it can neither ALTER a table nor disable a trigger.
	AppRole = "etchlog_app"
)

// ErrPrivilegedLogin means the service was asked to connect as a login that
// is a superuser or can act as the owner of etchlog's tables.
var ErrPrivilegedLogin = errors.New("the service's database login must not be a superuser or the tables' owner")

// ensureRoles creates the owner and application roles when the cluster lacks
// them. Several processes (test packages, a demo and a server) may do this at
// once; the one that loses the race sees a duplicate and carries on.
const ensureRoles = `
DO $$
BEGIN
    IF NOT EXISTS (SELECT 1 FROM pg_roles WHERE rolname = '` + OwnerRole + `') THEN
        BEGIN
            CREATE ROLE ` + OwnerRole + ` NOLOGIN;
        EXCEPTION WHEN duplicate_object OR unique_violation THEN NULL;
        END;
    END IF;
    IF NOT EXISTS (SELECT 1 FROM pg_roles WHERE rolname = '` + AppRole + `') THEN
        BEGIN
            CREATE ROLE ` + AppRole + ` LOGIN;
        EXCEPTION WHEN duplicate_object OR unique_violation THEN NULL;
        END;
    END IF;
END $$`

// handOver makes the owner role the owner of every object already in the
// public schema (a database migrated before the roles existed), lets it
// create objects there, and takes CREATE on the schema away from everyone
// else (PostgreSQL before 15 grants it to PUBLIC).
const handOver = `
DO $$
DECLARE r record;
BEGIN
    -- Two processes setting up one database would collide on the schema's ACL.
    PERFORM pg_advisory_xact_lock(hashtextextended('etchlog-setup', 0));
    IF NOT has_schema_privilege('` + OwnerRole + `', 'public', 'CREATE') THEN
        GRANT USAGE, CREATE ON SCHEMA public TO ` + OwnerRole + `;
    END IF;
    IF has_schema_privilege('public', 'public', 'CREATE') THEN
        REVOKE CREATE ON SCHEMA public FROM PUBLIC;
    END IF;
    FOR r IN SELECT c.relname, c.relkind FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
             WHERE n.nspname = 'public' AND c.relkind IN ('r', 'p', 'v', 'm', 'S')
               AND c.relowner <> (SELECT oid FROM pg_roles WHERE rolname = '` + OwnerRole + `') LOOP
        EXECUTE format('ALTER %s public.%I OWNER TO ` + OwnerRole + `',
            CASE r.relkind WHEN 'S' THEN 'SEQUENCE' WHEN 'v' THEN 'VIEW' WHEN 'm' THEN 'MATERIALIZED VIEW' ELSE 'TABLE' END, r.relname);
    END LOOP;
    FOR r IN SELECT p.oid::regprocedure AS fn FROM pg_proc p JOIN pg_namespace n ON n.oid = p.pronamespace
             WHERE n.nspname = 'public'
               AND p.proowner <> (SELECT oid FROM pg_roles WHERE rolname = '` + OwnerRole + `') LOOP
        EXECUTE format('ALTER FUNCTION %s OWNER TO ` + OwnerRole + `', r.fn);
    END LOOP;
END $$`

// Setup prepares the database at ownerURL and applies every migration. The
// login in ownerURL must be a superuser (or hold CREATEROLE and membership in
// OwnerRole once the roles exist); the migrations themselves run as OwnerRole.
func Setup(ctx context.Context, ownerURL string) error {
	conn, err := pgx.Connect(ctx, ownerURL)
	if err != nil {
		return fmt.Errorf("db: setup connect: %w", err)
	}
	defer conn.Close(ctx)
	var super bool
	if err := conn.QueryRow(ctx, `SELECT rolsuper FROM pg_roles WHERE rolname = current_user`).Scan(&super); err != nil {
		return fmt.Errorf("db: setup: %w", err)
	}
	if _, err := conn.Exec(ctx, ensureRoles); err != nil {
		return fmt.Errorf("db: create roles %s and %s: %w", OwnerRole, AppRole, err)
	}
	if super { // only a superuser can take objects from another owner
		if _, err := conn.Exec(ctx, handOver); err != nil {
			return fmt.Errorf("db: hand the schema to %s: %w", OwnerRole, err)
		}
	}
	return migrateRun(ownerURL, "up")
}

// OpenOwner connects as OwnerRole through the administrator's login in url,
// for administration (users, migrations); the service never uses it.
func OpenOwner(ctx context.Context, url string) (*Store, error) {
	return open(ctx, url, OwnerRole, false, 0)
}

// AppURL is url with its login replaced by AppRole and no password: the
// service's URL on a server that trusts local connections (a workstation,
// the demo's private cluster, a test server). Elsewhere give the service a
// URL of its own with AppRole's password.
func AppURL(raw string) (string, error) {
	u, err := url.Parse(raw)
	if err != nil || (u.Scheme != "postgres" && u.Scheme != "postgresql") {
		return "", fmt.Errorf("db: %q is not a postgres:// URL; give the service's login in a URL of its own", raw)
	}
	u.User = url.User(AppRole)
	return u.String(), nil
}

// Privileged reports whether the login of url is a superuser or can act as
// the owner of an object in the public schema.
func Privileged(ctx context.Context, url string) (bool, error) {
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		return false, fmt.Errorf("db: connect: %w", err)
	}
	defer conn.Close(ctx)
	return privileged(ctx, conn)
}

func privileged(ctx context.Context, q querier) (bool, error) {
	var p bool
	err := q.QueryRow(ctx, `
		SELECT (SELECT rolsuper FROM pg_roles WHERE rolname = current_user)
		    OR EXISTS (SELECT 1 FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
		               WHERE n.nspname = 'public' AND pg_has_role(current_user, c.relowner, 'USAGE'))`).Scan(&p)
	return p, err
}
