-- Back to one table. Refused while a month is detached: its records would
-- have nowhere to go but back into the live table, which is a decision for
-- an operator, not a migration.
DO $$
BEGIN
    IF EXISTS (SELECT 1 FROM production_detachments) THEN
        RAISE EXCEPTION 'production months were detached; attach them back before migrating down'
            USING ERRCODE = 'object_in_use';
    END IF;
END $$;
DROP FUNCTION etchlog_detach_production_month(date, text);
DROP VIEW production_records_all;
ALTER TABLE production_records RENAME TO production_records_by_month;
ALTER TABLE production_records_by_month DROP CONSTRAINT production_records_site_batch_id_fkey;
ALTER TABLE production_batches DROP CONSTRAINT production_batches_pkey, ADD PRIMARY KEY (id);
DROP INDEX production_records_procedure, production_records_welder, production_records_recorded_at, production_records_weld;
CREATE TABLE production_records (
    site                  text        NOT NULL,
    id                    uuid        NOT NULL PRIMARY KEY,
    batch_id              uuid        NOT NULL REFERENCES production_batches (id),
    procedure_id          uuid        NOT NULL,
    weld_id               text        NOT NULL CHECK (length(weld_id) BETWEEN 1 AND 64),
    welder_id             text        NOT NULL CHECK (length(welder_id) BETWEEN 1 AND 64),
    recorded_at           timestamptz NOT NULL,
    current_a             double precision NOT NULL CHECK (current_a BETWEEN 10 AND 1000),
    voltage_v             double precision NOT NULL CHECK (voltage_v BETWEEN 5 AND 60),
    travel_speed_mm_s     double precision NOT NULL CHECK (travel_speed_mm_s BETWEEN 0.5 AND 30),
    wire_feed_speed_m_min double precision NOT NULL CHECK (wire_feed_speed_m_min BETWEEN 0.5 AND 30),
    ctwd_mm               double precision CHECK (ctwd_mm BETWEEN 3 AND 50),
    created_at            timestamptz NOT NULL,
    created_by            text        NOT NULL CHECK (created_by <> '')
);
INSERT INTO production_records SELECT * FROM production_records_by_month;
CREATE INDEX production_records_site_id ON production_records (site, id);
CREATE INDEX production_records_procedure ON production_records (site, procedure_id, id);
CREATE UNIQUE INDEX production_records_weld_key ON production_records (site, procedure_id, weld_id);
CREATE INDEX production_records_welder ON production_records (site, welder_id, recorded_at);
CREATE INDEX production_records_recorded_at ON production_records (site, recorded_at);
CREATE INDEX production_records_weld ON production_records (site, weld_id);
CREATE TRIGGER production_records_append_only BEFORE UPDATE OR DELETE ON production_records
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER production_records_no_truncate BEFORE TRUNCATE ON production_records
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
DROP TABLE production_records_by_month;
DROP TABLE production_records_detached;
DROP FUNCTION etchlog_production_month(date);
DROP TABLE production_welds;
DROP TABLE production_detachments;
