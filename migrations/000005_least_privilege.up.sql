-- Least privilege. Every object is owned by etchlog_owner (migrations run as
-- it); the service logs in as etchlog_app, which may only read and append
-- records and log entries. It owns nothing, so it cannot ALTER a table,
-- disable a trigger or TRUNCATE; it has no UPDATE or DELETE on any record or
-- log table. The roles themselves are created before the migrations run
-- (db.Setup), since roles belong to the whole cluster.
--
-- API users become records too: each change of a user (a new user, a new
-- role or token, a revocation) is a new revision with a reason and an audit
-- event, so a role changed by SQL behind the service's back shows in verify.

ALTER TABLE api_users
    ADD COLUMN id         uuid,
    ADD COLUMN revision   integer,
    ADD COLUMN created_by text,
    ADD COLUMN reason     text    NOT NULL DEFAULT '',
    ADD COLUMN voided     boolean NOT NULL DEFAULT false;
UPDATE api_users SET id = gen_random_uuid(), revision = 1, created_by = 'etchlog-migration';
ALTER TABLE api_users
    ALTER COLUMN id SET NOT NULL,
    ALTER COLUMN revision SET NOT NULL,
    ALTER COLUMN created_by SET NOT NULL,
    ADD CONSTRAINT api_users_revision_check CHECK (revision >= 1),
    ADD CONSTRAINT api_users_created_by_check CHECK (created_by <> ''),
    ADD CONSTRAINT api_users_reason_check CHECK (revision = 1 OR reason <> ''),
    ADD CONSTRAINT api_users_reason_length CHECK (length(reason) <= 2000),
    DROP CONSTRAINT api_users_pkey,
    ADD PRIMARY KEY (id, revision);
-- A user's name is its identity at the site, like a procedure's code.
CREATE UNIQUE INDEX api_users_name_key ON api_users (site, name) WHERE revision = 1;
CREATE INDEX api_users_site_id ON api_users (site, id, revision DESC);

-- Users that existed before enter the audit chain as created now.
DO $$
DECLARE u record; s bigint; h bytea; p jsonb; t timestamptz := now();
BEGIN
    FOR u IN SELECT * FROM api_users ORDER BY site, name LOOP
        SELECT e.seq, e.hash INTO s, h FROM audit_events e WHERE e.site = u.site ORDER BY e.seq DESC LIMIT 1;
        IF NOT FOUND THEN s := 0; h := '\x0000000000000000000000000000000000000000000000000000000000000000'::bytea; END IF;
        SELECT to_jsonb(r) INTO p FROM api_users r WHERE r.id = u.id AND r.revision = 1;
        INSERT INTO audit_events (site, seq, at, actor, action, entity, entity_id, revision, reason, payload, prev_hash, hash)
        VALUES (u.site, s + 1, t, u.created_by, 'create', 'user', u.id, 1, '', p, h,
                etchlog_audit_hash(h, s + 1, t, u.created_by, 'create', 'user', u.id, 1, '', p));
    END LOOP;
END $$;

CREATE TRIGGER api_users_append_only BEFORE UPDATE OR DELETE ON api_users
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER api_users_no_truncate BEFORE TRUNCATE ON api_users
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();

-- The service: read and append every record and log table...
GRANT USAGE ON SCHEMA public TO etchlog_app;
GRANT SELECT, INSERT ON ALL TABLES IN SCHEMA public TO etchlog_app;
-- ...but users are written by an administrator (etchlog user add, as the
-- owner), and the schema's version only by migrations.
REVOKE INSERT ON api_users FROM etchlog_app;
REVOKE INSERT ON schema_migrations FROM etchlog_app;
-- Derived tables: recomputed from the records in the writing transaction,
-- so the service may delete and rewrite them (never UPDATE).
GRANT DELETE ON flags TO etchlog_app;
-- Tables that later migrations create are readable and appendable by the
-- service; anything more is granted by name, beside the table.
ALTER DEFAULT PRIVILEGES FOR ROLE etchlog_owner IN SCHEMA public GRANT SELECT, INSERT ON TABLES TO etchlog_app;
ALTER DEFAULT PRIVILEGES FOR ROLE etchlog_owner IN SCHEMA public GRANT USAGE, SELECT ON SEQUENCES TO etchlog_app;
