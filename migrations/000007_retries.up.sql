-- Retries are safe: a creating POST sent with an Idempotency-Key header is
-- remembered per user, with a digest of what was asked and the answer given,
-- so a retry gets the same answer instead of a second record. Rows are kept
-- at least 24 hours and then may be removed (this table is bookkeeping, not a
-- record: it is not append-only and not exported).
--
-- A request holds the key by its claim_token while it runs. The record write
-- sets committed in its own transaction, and only while it still holds the
-- claim, so a key is written at most once: a retry may take over a claim
-- whose holder went away only while committed is false.
CREATE TABLE idempotency_keys (
    site           text        NOT NULL,
    user_name      text        NOT NULL,
    key            text        NOT NULL CHECK (length(key) BETWEEN 1 AND 255),
    request_sha256 bytea       NOT NULL,
    created_at     timestamptz NOT NULL,
    claim_token    uuid        NOT NULL,
    claimed_at     timestamptz NOT NULL,
    committed      boolean     NOT NULL DEFAULT false,
    -- NULL until the request that holds the key has its answer.
    status         integer     CHECK (status BETWEEN 200 AND 599),
    content_type   text,
    location       text,
    body           bytea,
    PRIMARY KEY (site, user_name, key)
);
CREATE INDEX idempotency_keys_created ON idempotency_keys (created_at);

-- The service records a key, then its answer, and forgets keys past 24 hours:
-- bookkeeping it may rewrite, unlike a record.
GRANT UPDATE, DELETE ON idempotency_keys TO etchlog_app;

-- A production weld is logged once per procedure; a repeat names the earlier record.
CREATE UNIQUE INDEX production_records_weld_key ON production_records (site, procedure_id, weld_id);
