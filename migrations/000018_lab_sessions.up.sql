-- Sessions of the lab pages. A person signs in with their token once; the
-- browser then holds a random 256-bit session id in a cookie, and the
-- server keeps only its SHA-256 (id_sha256), so a reader of this table
-- cannot act as anyone. A session names the user and the revision of the
-- user it was opened under: a new token, a new role or a revocation is a
-- new revision, and a session of an older one is no longer honoured.
-- Both tables are append-only (the service may SELECT and INSERT, by the
-- default privileges of 000005): signing out is a row of lab_sign_outs, so
-- it holds across restarts and for every process serving the pages. Keys
-- hold site like every key of a site's data; a session is looked up by its
-- hash alone (the browser names no site), through lab_sessions_id.
CREATE TABLE lab_sessions (
    site          text        NOT NULL CHECK (site <> ''),
    id_sha256     bytea       NOT NULL CHECK (length(id_sha256) = 32),
    user_name     text        NOT NULL CHECK (user_name <> ''),
    user_revision integer     NOT NULL CHECK (user_revision >= 1),
    created_at    timestamptz NOT NULL,
    expires_at    timestamptz NOT NULL CHECK (expires_at > created_at),
    PRIMARY KEY (site, id_sha256)
);
CREATE INDEX lab_sessions_id ON lab_sessions (id_sha256);

CREATE TABLE lab_sign_outs (
    site           text        NOT NULL,
    session_sha256 bytea       NOT NULL,
    signed_out_at  timestamptz NOT NULL,
    PRIMARY KEY (site, session_sha256),
    FOREIGN KEY (site, session_sha256) REFERENCES lab_sessions (site, id_sha256)
);

CREATE TRIGGER lab_sessions_append_only BEFORE UPDATE OR DELETE ON lab_sessions
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER lab_sessions_no_truncate BEFORE TRUNCATE ON lab_sessions
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER lab_sign_outs_append_only BEFORE UPDATE OR DELETE ON lab_sign_outs
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER lab_sign_outs_no_truncate BEFORE TRUNCATE ON lab_sign_outs
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
