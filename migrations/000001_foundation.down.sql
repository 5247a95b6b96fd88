DROP TABLE IF EXISTS api_users;
DROP TABLE IF EXISTS audit_events;
DROP TABLE IF EXISTS measurements;
DROP TABLE IF EXISTS coupons;
DROP TABLE IF EXISTS qualification_records;
DROP TABLE IF EXISTS procedures;
DROP FUNCTION IF EXISTS etchlog_append_only();
DROP FUNCTION IF EXISTS etchlog_audit_hash(bytea, bigint, timestamptz, text, text, text, uuid, integer, text, jsonb);
