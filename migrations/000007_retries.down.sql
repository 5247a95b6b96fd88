DROP INDEX IF EXISTS production_records_weld_key;
DROP TABLE IF EXISTS idempotency_keys;
