-- The sign-offs list's key. The list walked every sign-off leaf from the
-- cursor and looked each sign-off up, so a page of one kind of record
-- logged after many sign-offs of another kind read all of those first (a
-- first page of procedures' sign-offs behind 10,000 of PQRs': 0.03x of a
-- raw page at 8 clients). sign_off_list holds one row per logged sign-off
-- (a sign-off is one revision, one leaf): its log index and the columns the
-- list filters on, each filter with an index (site, <column>, leaf_index),
-- so a page reads only its own entries in log order and then its rows by
-- key. The log sequencer writes a sign-off's row in the transaction that
-- gives its leaf an index (db/signoff_list.go); the table is derived from
-- records and log and Store.RecheckSignOffList compares it with the view.
CREATE VIEW sign_off_list_derived AS
SELECT s.site, s.id, lg.leaf_index, s.record_kind, s.record_id, s.signed_by
FROM sign_offs s
JOIN log_leaves lg ON lg.site = s.site AND lg.record_id = s.id AND lg.kind = 'sign_off';

CREATE TABLE sign_off_list AS SELECT * FROM sign_off_list_derived WITH NO DATA;
ALTER TABLE sign_off_list ADD PRIMARY KEY (site, id),
    ALTER COLUMN leaf_index SET NOT NULL,
    ALTER COLUMN record_kind SET NOT NULL,
    ALTER COLUMN record_id SET NOT NULL,
    ALTER COLUMN signed_by SET NOT NULL;

-- Sign-offs logged before this migration (filled before the indexes exist).
INSERT INTO sign_off_list SELECT * FROM sign_off_list_derived;

-- Each filter walks its own index in log order, carrying the key and what a
-- combined filter checks, so a walk reads index entries only.
CREATE INDEX sign_off_list_log ON sign_off_list (site, leaf_index) INCLUDE (id);
CREATE INDEX sign_off_list_kind ON sign_off_list (site, record_kind, leaf_index) INCLUDE (id, signed_by);
CREATE INDEX sign_off_list_signer ON sign_off_list (site, signed_by, leaf_index) INCLUDE (id, record_kind);
CREATE INDEX sign_off_list_record ON sign_off_list (site, record_id, leaf_index) INCLUDE (id, record_kind, signed_by);
-- Derived: rows are deleted and written again when it is derived anew.
GRANT DELETE ON sign_off_list TO etchlog_app;
