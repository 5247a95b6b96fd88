CREATE INDEX log_leaves_kind ON log_leaves (site, kind, leaf_index);
DROP INDEX log_leaves_kind_records;
DROP INDEX log_leaves_record;
CREATE INDEX log_leaves_record ON log_leaves (site, record_id, revision);
