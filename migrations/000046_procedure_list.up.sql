-- The procedures list's key. The list walked every procedure leaf from the
-- cursor and looked each procedure up, and checked that no later leaf of
-- it followed (0.15-0.33x of a raw page at 8 clients at 5,000 procedures).
-- procedure_list holds one row per logged procedure: its latest logged
-- revision, that revision's log index and the columns the list filters on
-- (process, status, void mark), each filter with an index (site, <column>,
-- leaf_index), so a page reads only its own entries in log order and then
-- its rows by key. The log sequencer rewrites a procedure's row in the
-- transaction that gives one of its leaves its index, from
-- procedure_list_derived (db/procedure_list.go); the table is derived
-- from records and log and Store.RecheckProcedureList compares it with the
-- view.
CREATE VIEW procedure_list_derived AS
SELECT p.site, p.id, p.revision, lg.leaf_index, p.voided, p.process, p.status
FROM procedures p
-- p is the revision of the procedure's latest leaf: reached from the
-- procedure (a condition on p.id selects by key, as the sequencer's
-- rewrite does).
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.site = p.site AND l.record_id = p.id AND l.kind = 'procedure'
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = p.revision;

CREATE TABLE procedure_list AS SELECT * FROM procedure_list_derived WITH NO DATA;
ALTER TABLE procedure_list ADD PRIMARY KEY (site, id),
    ALTER COLUMN revision SET NOT NULL,
    ALTER COLUMN leaf_index SET NOT NULL,
    ALTER COLUMN voided SET NOT NULL,
    ALTER COLUMN process SET NOT NULL,
    ALTER COLUMN status SET NOT NULL;

-- Procedures logged before this migration (filled before the indexes exist).
INSERT INTO procedure_list SELECT * FROM procedure_list_derived;

-- Each filter walks its own index in log order, carrying the key and what
-- a combined filter checks, so a walk reads index entries only.
CREATE INDEX procedure_list_log ON procedure_list (site, leaf_index) INCLUDE (voided, id, revision);
CREATE INDEX procedure_list_process ON procedure_list (site, process, leaf_index) INCLUDE (voided, id, revision, status);
CREATE INDEX procedure_list_status ON procedure_list (site, status, leaf_index) INCLUDE (voided, id, revision, process);
-- Derived: the sequencer deletes a procedure's row and writes it again.
GRANT DELETE ON procedure_list TO etchlog_app;
