-- The sections list's key. Lists page in log order; a filtered sections page
-- used to walk every section leaf from the cursor and look each section up,
-- so a verdict few sections have (reject) read the whole log's sections for
-- one page. section_list holds one row per logged section: its latest logged
-- revision, that revision's log index and the columns the list filters on,
-- each filter with an index (site, <column>, leaf_index), so a page reads
-- only its own entries in log order and then its rows by key.
-- The log sequencer rewrites a section's row in the transaction that gives
-- one of its leaves its index, from section_list_derived (db/section_list.go);
-- the table is derived from records and log and Store.RecheckSectionList
-- compares it with the view.
CREATE VIEW section_list_derived AS
SELECT m.site, m.id, m.revision, lg.leaf_index, m.coupon_id, m.acceptance, m.voided
FROM measurements m
-- m is the revision of the section's latest leaf: reached from the section
-- (a condition on m.id selects by key, as the sequencer's rewrite does).
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.site = m.site AND l.record_id = m.id AND l.kind = 'measurement'
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = m.revision;

CREATE TABLE section_list AS SELECT * FROM section_list_derived WITH NO DATA;
ALTER TABLE section_list ADD PRIMARY KEY (site, id),
    ALTER COLUMN revision SET NOT NULL,
    ALTER COLUMN leaf_index SET NOT NULL,
    ALTER COLUMN coupon_id SET NOT NULL,
    ALTER COLUMN acceptance SET NOT NULL,
    ALTER COLUMN voided SET NOT NULL;

-- Sections logged before this migration (filled before the indexes exist).
INSERT INTO section_list SELECT * FROM section_list_derived;

-- Each filter walks its own index in log order; each carries the void mark
-- and the key, so the walk reads index entries only and the page's rows are
-- read by key.
CREATE INDEX section_list_log ON section_list (site, leaf_index) INCLUDE (voided, id, revision);
CREATE INDEX section_list_acceptance ON section_list (site, acceptance, leaf_index) INCLUDE (voided, id, revision);
CREATE INDEX section_list_coupon ON section_list (site, coupon_id, leaf_index) INCLUDE (voided, acceptance, id, revision);
-- Derived: the sequencer deletes a section's row and writes it again.
GRANT DELETE ON section_list TO etchlog_app;
