DROP TABLE IF EXISTS flags;
DROP TABLE IF EXISTS production_records;
DROP TABLE IF EXISTS production_batches;
DROP TABLE IF EXISTS procedure_ranges;
DROP TABLE IF EXISTS rule_sets;
