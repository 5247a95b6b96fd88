ALTER DEFAULT PRIVILEGES FOR ROLE etchlog_owner IN SCHEMA public REVOKE USAGE, SELECT ON SEQUENCES FROM etchlog_app;
ALTER DEFAULT PRIVILEGES FOR ROLE etchlog_owner IN SCHEMA public REVOKE SELECT, INSERT ON TABLES FROM etchlog_app;
REVOKE ALL ON ALL TABLES IN SCHEMA public FROM etchlog_app;
REVOKE ALL ON ALL SEQUENCES IN SCHEMA public FROM etchlog_app;
REVOKE USAGE ON SCHEMA public FROM etchlog_app;

DROP TRIGGER IF EXISTS api_users_no_truncate ON api_users;
DROP TRIGGER IF EXISTS api_users_append_only ON api_users;
-- Back to one row per user: its latest revision, unless revoked.
DELETE FROM api_users u WHERE u.voided OR EXISTS (SELECT 1 FROM api_users l WHERE l.id = u.id AND l.revision > u.revision);
DROP INDEX IF EXISTS api_users_site_id;
DROP INDEX IF EXISTS api_users_name_key;
ALTER TABLE api_users DROP CONSTRAINT api_users_pkey;
ALTER TABLE api_users
    DROP COLUMN id, DROP COLUMN revision, DROP COLUMN created_by, DROP COLUMN reason, DROP COLUMN voided,
    ADD PRIMARY KEY (site, name);
