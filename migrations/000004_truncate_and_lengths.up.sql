-- Row triggers do not fire on TRUNCATE; refuse it with statement triggers on
-- every append-only table. Also bound the free-text columns whose limits the
-- API already enforces, so the database refuses what the API refuses.
CREATE TRIGGER procedures_no_truncate BEFORE TRUNCATE ON procedures
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER qualification_records_no_truncate BEFORE TRUNCATE ON qualification_records
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER coupons_no_truncate BEFORE TRUNCATE ON coupons
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER measurements_no_truncate BEFORE TRUNCATE ON measurements
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER audit_events_no_truncate BEFORE TRUNCATE ON audit_events
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER calibrations_no_truncate BEFORE TRUNCATE ON calibrations
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER calibration_activations_no_truncate BEFORE TRUNCATE ON calibration_activations
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER rule_sets_no_truncate BEFORE TRUNCATE ON rule_sets
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER procedure_ranges_no_truncate BEFORE TRUNCATE ON procedure_ranges
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER production_batches_no_truncate BEFORE TRUNCATE ON production_batches
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER production_records_no_truncate BEFORE TRUNCATE ON production_records
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();

ALTER TABLE procedures ADD CONSTRAINT procedures_shielding_gas_length CHECK (length(shielding_gas) <= 64);
ALTER TABLE qualification_records ADD CONSTRAINT qualification_records_shielding_gas_length CHECK (length(shielding_gas) <= 64);
ALTER TABLE qualification_records ADD CONSTRAINT qualification_records_remarks_length CHECK (length(remarks) <= 2000);
ALTER TABLE coupons ADD CONSTRAINT coupons_power_source_id_length CHECK (length(power_source_id) <= 64);
ALTER TABLE coupons ADD CONSTRAINT coupons_filler_lot_length CHECK (length(filler_lot) <= 64);
ALTER TABLE coupons ADD CONSTRAINT coupons_shielding_gas_length CHECK (length(shielding_gas) <= 64);
ALTER TABLE measurements ADD CONSTRAINT measurements_remark_length CHECK (length(remark) <= 2000);
