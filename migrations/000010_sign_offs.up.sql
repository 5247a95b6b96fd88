-- Sign-off: an engineer states that one revision of a qualification record,
-- a procedure or a calibration is right. The row names who, when, the
-- statement, and the hash of exactly what was signed: the leaf hash under
-- which that revision entered the site's record log (signed_hash_of). A
-- later correction is a new revision with no sign-off until signed again.
-- Sign-offs are records: append-only, each a leaf of the log; one per
-- revision.
CREATE TABLE sign_offs (
    site            text        NOT NULL,
    id              uuid        NOT NULL PRIMARY KEY,
    record_kind     text        NOT NULL CHECK (record_kind IN ('qualification_record', 'procedure', 'calibration')),
    record_id       uuid        NOT NULL,
    record_revision integer     NOT NULL CHECK (record_revision >= 1),
    statement       text        NOT NULL CHECK (length(statement) BETWEEN 1 AND 2000),
    signed_hash     bytea       NOT NULL CHECK (length(signed_hash) = 32),
    signed_hash_of  text        NOT NULL CHECK (signed_hash_of IN ('log_leaf')),
    signed_by       text        NOT NULL CHECK (signed_by <> ''),
    signer_role     text        NOT NULL CHECK (signer_role = 'engineer'),
    signed_at       timestamptz NOT NULL,
    UNIQUE (site, record_kind, record_id, record_revision)
);
CREATE INDEX sign_offs_record ON sign_offs (record_id, record_revision);

CREATE TRIGGER sign_offs_append_only BEFORE UPDATE OR DELETE ON sign_offs
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER sign_offs_no_truncate BEFORE TRUNCATE ON sign_offs
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
