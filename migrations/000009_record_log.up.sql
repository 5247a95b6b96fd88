-- The record log: per site, an append-only Merkle tree (RFC 9162 hashing) with
-- one leaf per recorded fact, replacing the hash chain of audit_events (kept,
-- no longer written). A write commits its rows and a pending leaf; the
-- sequencer (one etchlog process at a time) moves committed pending leaves
-- into log_leaves in batches, gives each its index, stores the tree's
-- perfect-subtree node hashes and a signed checkpoint. Writers never wait for
-- one another.

-- Pending leaves: the only table the sequencer deletes from (a queue).
CREATE TABLE log_pending (
    seq        bigserial   PRIMARY KEY CHECK (seq > 0),
    site       text        NOT NULL,
    kind       text        NOT NULL,
    version    integer     NOT NULL,
    record_id  uuid        NOT NULL,
    revision   integer     NOT NULL,
    leaf_hash  bytea       CHECK (leaf_hash IS NULL OR length(leaf_hash) = 32),
    tag        bytea,
    actor      text        NOT NULL,
    action     text        NOT NULL,
    reason     text        NOT NULL DEFAULT '',
    at         timestamptz NOT NULL,
    UNIQUE (site, kind, record_id, revision)
);
CREATE INDEX log_pending_site ON log_pending (site, seq);
-- The service's sequencer removes what it has integrated (migration 000005
-- gives the service SELECT and INSERT on every new table by default).
GRANT DELETE ON log_pending TO etchlog_app;

CREATE TABLE log_leaves (
    site          text        NOT NULL,
    leaf_index    bigint      NOT NULL CHECK (leaf_index >= 0),
    kind          text        NOT NULL,
    version       integer     NOT NULL,
    record_id     uuid        NOT NULL,
    revision      integer     NOT NULL,
    leaf_hash     bytea       NOT NULL CHECK (length(leaf_hash) = 32),
    actor         text        NOT NULL,
    action        text        NOT NULL,
    reason        text        NOT NULL DEFAULT '',
    at            timestamptz NOT NULL,
    integrated_at timestamptz NOT NULL,
    pending_seq   bigint      NOT NULL,
    PRIMARY KEY (site, leaf_index),
    UNIQUE (site, kind, record_id, revision)
);
CREATE INDEX log_leaves_kind ON log_leaves (site, kind, leaf_index);
CREATE INDEX log_leaves_record ON log_leaves (site, record_id, revision);
CREATE INDEX log_leaves_pending_seq ON log_leaves (site, pending_seq);

-- Pending leaves the sequencer refused (no valid tag: not written by the
-- service), kept so verification names them; their rows stay unlogged.
CREATE TABLE log_rejected (
    seq         bigint      PRIMARY KEY,
    site        text        NOT NULL,
    kind        text        NOT NULL,
    record_id   uuid        NOT NULL,
    revision    integer     NOT NULL,
    why         text        NOT NULL,
    rejected_at timestamptz NOT NULL
);

-- Hashes of the perfect subtrees (level 0: leaf hashes), for proofs.
CREATE TABLE log_nodes (
    site       text     NOT NULL,
    tree_level smallint NOT NULL,
    tree_index bigint   NOT NULL,
    hash       bytea    NOT NULL,
    PRIMARY KEY (site, tree_level, tree_index)
);

-- One signed checkpoint per integrated batch; range_hashes is the compact
-- range [0, size) the next batch continues from.
CREATE TABLE log_checkpoints (
    site         text        NOT NULL,
    size         bigint      NOT NULL CHECK (size >= 0),
    root         bytea       NOT NULL,
    range_hashes bytea[]     NOT NULL,
    note         text        NOT NULL,
    created_at   timestamptz NOT NULL,
    PRIMARY KEY (site, size)
);

CREATE TRIGGER log_leaves_append_only BEFORE UPDATE OR DELETE ON log_leaves
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER log_nodes_append_only BEFORE UPDATE OR DELETE ON log_nodes
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER log_checkpoints_append_only BEFORE UPDATE OR DELETE ON log_checkpoints
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER log_rejected_append_only BEFORE UPDATE OR DELETE ON log_rejected
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER log_pending_no_update BEFORE UPDATE ON log_pending
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER log_leaves_no_truncate BEFORE TRUNCATE ON log_leaves
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER log_nodes_no_truncate BEFORE TRUNCATE ON log_nodes
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER log_checkpoints_no_truncate BEFORE TRUNCATE ON log_checkpoints
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();

-- Facts stored before this migration enter the log once, as pending leaves
-- without a hash (the sequencer encodes them from the stored row); only
-- pending rows up to the horizon recorded here may lack a hash and a tag.
INSERT INTO log_pending (site, kind, version, record_id, revision, actor, action, reason, at)
SELECT site, kind, 1, id, revision, created_by, CASE WHEN revision = 1 THEN 'create' WHEN voided THEN 'void' ELSE 'correct' END, reason, created_at
FROM (
    SELECT site, 'procedure' AS kind, id, revision, created_by, voided, reason, created_at FROM procedures
    UNION ALL SELECT site, 'qualification_record', id, revision, created_by, voided, reason, created_at FROM qualification_records
    UNION ALL SELECT site, 'coupon', id, revision, created_by, voided, reason, created_at FROM coupons
    UNION ALL SELECT site, 'measurement', id, revision, created_by, voided, reason, created_at FROM measurements
    UNION ALL SELECT site, 'calibration', id, 1, created_by, false, '', created_at FROM calibrations
    UNION ALL SELECT site, 'calibration_activation', id, 1, activated_by, false, reason, activated_at FROM calibration_activations
    UNION ALL SELECT site, 'rule_set', id, 1, created_by, false, '', created_at FROM rule_sets WHERE site <> ''
    UNION ALL SELECT site, 'procedure_ranges', id, 1, created_by, false, reason, created_at FROM procedure_ranges
    UNION ALL SELECT site, 'production_batch', id, 1, created_by, false, '', created_at FROM production_batches
    UNION ALL SELECT site, 'production_record', id, 1, created_by, false, '', created_at FROM production_records
    UNION ALL SELECT site, 'user', id, revision, created_by, voided, reason, created_at FROM api_users
) f
ORDER BY created_at, kind, id, revision;

CREATE TABLE log_backfill (horizon bigint NOT NULL);
INSERT INTO log_backfill SELECT coalesce(max(seq), 0) FROM log_pending;
CREATE TRIGGER log_backfill_append_only BEFORE INSERT OR UPDATE OR DELETE ON log_backfill
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
