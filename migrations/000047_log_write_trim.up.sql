-- What the sequencer writes per leaf, trimmed by two entries that repeated
-- others.
--
-- log_leaves_record (site, record_id, revision) INCLUDE (kind) held the same
-- four columns as the unique key (site, kind, record_id, revision), and every
-- statement that finds a leaf by its record names the kind too (the list
-- views' latest-leaf lookups, proofs, sign-offs, the export's unlogged rows),
-- so the unique key serves them all.
DROP INDEX log_leaves_record;

-- A level-0 tree node is a leaf's hash, already in its log_leaves row:
-- proofs now read it there and the sequencer stores nodes from level 1 up.
-- The stored level-0 rows are removed (derived data, equal to the leaves';
-- the append-only trigger is lifted for this statement only).
ALTER TABLE log_nodes DISABLE TRIGGER log_nodes_append_only;
DELETE FROM log_nodes WHERE tree_level = 0;
ALTER TABLE log_nodes ENABLE TRIGGER log_nodes_append_only;
