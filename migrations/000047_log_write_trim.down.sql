-- Level-0 tree nodes stored again, from the leaves, and the record index back.
INSERT INTO log_nodes (site, tree_level, tree_index, hash)
SELECT site, 0, leaf_index, leaf_hash FROM log_leaves;
CREATE INDEX log_leaves_record ON log_leaves (site, record_id, revision) INCLUDE (kind);
