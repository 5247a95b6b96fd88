DROP TABLE IF EXISTS log_backfill;
DROP TABLE IF EXISTS log_checkpoints;
DROP TABLE IF EXISTS log_nodes;
DROP TABLE IF EXISTS log_rejected;
DROP TABLE IF EXISTS log_leaves;
DROP TABLE IF EXISTS log_pending;
