-- The production records list's filter by weld reads the weld claims
-- instead of an index of its own. Every record in production_list has its
-- claim in production_welds (the write that stores a record claims its
-- weld in the same transaction, and a claim is never removed), and a weld id
-- names at most one record per procedure, so a page by weld finds the few
-- claims of that weld id by this key, then each record's row in the list's
-- key by (site, id); a claim whose record is not listed (still waiting for
-- the sequencer, or in a detached month) finds no row.
--
-- The claims' key keeps its columns and so what it refuses (one record per
-- site, procedure and weld id), with the weld id before the procedure so
-- that a weld id alone is a prefix of it. production_list_weld, one of the
-- seven indexes the sequencer wrote per record as it moved the records into
-- the list's key, and the one whose entries land at scattered places, goes.
ALTER TABLE production_welds DROP CONSTRAINT production_welds_pkey,
    ADD CONSTRAINT production_welds_pkey PRIMARY KEY (site, weld_id, procedure_id);
DROP INDEX production_list_weld;
