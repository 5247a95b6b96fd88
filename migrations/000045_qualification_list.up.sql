-- The PQRs list's key. The list walked every PQR leaf from the cursor and
-- looked each PQR up, and checked that no later leaf of it followed, so a
-- page of a filter that keeps few PQRs, or of welding days late in the
-- log, read most of the log first (the last tenth of welding days: 0.04x
-- of a raw page at 8 clients). qualification_list holds one row per logged
-- PQR: its latest logged revision, that revision's log index and the
-- columns the list filters on, each filter with an index (site, <column>,
-- leaf_index), so a page reads only its own entries in log order and then
-- its rows by key. The log sequencer rewrites a PQR's row in the
-- transaction that gives one of its leaves its index, from
-- qualification_list_derived (db/qualification_list.go); the table is
-- derived from records and log and Store.RecheckQualificationList compares
-- it with the view.
CREATE VIEW qualification_list_derived AS
SELECT q.site, q.id, q.revision, lg.leaf_index, q.voided, q.process, q.welder_id, q.outcome, q.welded_on,
       date_trunc('month', q.welded_on)::date AS welded_month
FROM qualification_records q
-- q is the revision of the PQR's latest leaf: reached from the PQR (a
-- condition on q.id selects by key, as the sequencer's rewrite does).
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.site = q.site AND l.record_id = q.id AND l.kind = 'qualification_record'
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = q.revision;

CREATE TABLE qualification_list AS SELECT * FROM qualification_list_derived WITH NO DATA;
ALTER TABLE qualification_list ADD PRIMARY KEY (site, id),
    ALTER COLUMN revision SET NOT NULL,
    ALTER COLUMN leaf_index SET NOT NULL,
    ALTER COLUMN voided SET NOT NULL,
    ALTER COLUMN process SET NOT NULL,
    ALTER COLUMN welder_id SET NOT NULL,
    ALTER COLUMN outcome SET NOT NULL,
    ALTER COLUMN welded_on SET NOT NULL,
    ALTER COLUMN welded_month SET NOT NULL;

-- PQRs logged before this migration (filled before the indexes exist).
INSERT INTO qualification_list SELECT * FROM qualification_list_derived;

-- Each filter walks its own index in log order; each carries the key and
-- what a combined filter checks, so a walk reads index entries only. A
-- welding-day range walks each day of its partial months and each whole
-- month between.
CREATE INDEX qualification_list_log ON qualification_list (site, leaf_index) INCLUDE (voided, id, revision);
CREATE INDEX qualification_list_process ON qualification_list (site, process, leaf_index) INCLUDE (voided, id, revision, outcome);
CREATE INDEX qualification_list_outcome ON qualification_list (site, outcome, leaf_index) INCLUDE (voided, id, revision, process);
CREATE INDEX qualification_list_welder ON qualification_list (site, welder_id, leaf_index)
    INCLUDE (voided, id, revision, process, outcome, welded_on);
CREATE INDEX qualification_list_day ON qualification_list (site, welded_on, leaf_index) INCLUDE (voided, id, revision, process, outcome);
CREATE INDEX qualification_list_month ON qualification_list (site, welded_month, leaf_index)
    INCLUDE (voided, id, revision, process, outcome, welded_on);
-- Derived: the sequencer deletes a PQR's row and writes it again.
GRANT DELETE ON qualification_list TO etchlog_app;
