-- The record lists (sections, qualification records, procedures,
-- production records, sign-offs) page through a kind's leaves in log order
-- and look each leaf's record up by (record_id, revision). The walk's index
-- carries those two columns, so it reads index entries only, not a
-- log_leaves row (hash, actor, times) per entry.
CREATE INDEX log_leaves_kind_records ON log_leaves (site, kind, leaf_index) INCLUDE (record_id, revision);
DROP INDEX log_leaves_kind;
-- A listed revision is current when no later revision of the record is
-- logged: that probe reads log_leaves_record, which carries the kind too.
CREATE INDEX log_leaves_record_kind ON log_leaves (site, record_id, revision) INCLUDE (kind);
DROP INDEX log_leaves_record;
ALTER INDEX log_leaves_record_kind RENAME TO log_leaves_record;
