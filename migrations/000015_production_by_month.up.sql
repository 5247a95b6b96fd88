-- Production records partitioned by the month (UTC) of recorded_at, so an
-- old month can be detached from the live table (DEVELOPERS.md, "Production
-- months"). Partitions are created on demand by etchlog_production_month,
-- which the service calls before it writes a month it has not seen; the
-- service owns nothing, so the function runs as the owner and does only that.
--
-- A unique index on a partitioned table must include the partition key, so a
-- weld's uniqueness per procedure moves to production_welds: one row per
-- logged weld, written in the same transaction as its record (its primary
-- key refuses a second record of the weld, whatever month either falls in).
-- Detaching a month keeps its welds: a weld once logged stays logged.

ALTER TABLE production_records RENAME TO production_records_before_months;
-- Keys hold site (one shard per site, as every other table of a site's data):
-- a record names its batch by site and id.
ALTER TABLE production_records_before_months DROP CONSTRAINT production_records_batch_id_fkey;
ALTER TABLE production_batches DROP CONSTRAINT production_batches_pkey, ADD PRIMARY KEY (site, id);
DROP INDEX production_records_site_id, production_records_procedure, production_records_weld_key,
    production_records_welder, production_records_recorded_at, production_records_weld;

CREATE TABLE production_records (
    site                  text        NOT NULL,
    id                    uuid        NOT NULL,
    batch_id              uuid        NOT NULL,
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
    created_by            text        NOT NULL CHECK (created_by <> ''),
    PRIMARY KEY (site, id, recorded_at),
    FOREIGN KEY (site, batch_id) REFERENCES production_batches (site, id)
) PARTITION BY RANGE (recorded_at);
CREATE INDEX production_records_procedure ON production_records (site, procedure_id, id);
CREATE INDEX production_records_welder ON production_records (site, welder_id, recorded_at);
CREATE INDEX production_records_recorded_at ON production_records (site, recorded_at);
CREATE INDEX production_records_weld ON production_records (site, weld_id);
CREATE TRIGGER production_records_append_only BEFORE UPDATE OR DELETE ON production_records
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER production_records_no_truncate BEFORE TRUNCATE ON production_records
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();

-- Detached months: same columns, partitioned the same way, never written by
-- the service. Verification and export read live and detached months alike
-- (production_records_all); a month dropped from here shows in verify as
-- facts missing from the database, as any deletion does.
CREATE TABLE production_records_detached (LIKE production_records INCLUDING DEFAULTS INCLUDING CONSTRAINTS,
    PRIMARY KEY (site, id, recorded_at)) PARTITION BY RANGE (recorded_at);
CREATE TRIGGER production_records_detached_append_only BEFORE UPDATE OR DELETE ON production_records_detached
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER production_records_detached_no_truncate BEFORE TRUNCATE ON production_records_detached
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
REVOKE ALL ON production_records_detached FROM etchlog_app;

CREATE VIEW production_records_all AS
    SELECT * FROM production_records UNION ALL SELECT * FROM production_records_detached;
REVOKE ALL ON production_records_all FROM etchlog_app;
GRANT SELECT ON production_records_all TO etchlog_app;

-- One row per detached month: when, by whom, how many records of each site.
CREATE TABLE production_detachments (
    month        date        NOT NULL,
    site         text        NOT NULL,
    record_count bigint      NOT NULL CHECK (record_count >= 0),
    detached_at  timestamptz NOT NULL,
    detached_by  text        NOT NULL,
    PRIMARY KEY (month, site)
);
CREATE TRIGGER production_detachments_append_only BEFORE UPDATE OR DELETE ON production_detachments
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER production_detachments_no_truncate BEFORE TRUNCATE ON production_detachments
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
REVOKE ALL ON production_detachments FROM etchlog_app;
GRANT SELECT ON production_detachments TO etchlog_app;

CREATE TABLE production_welds (
    site         text NOT NULL,
    procedure_id uuid NOT NULL,
    weld_id      text NOT NULL,
    record_id    uuid NOT NULL,
    PRIMARY KEY (site, procedure_id, weld_id)
);
CREATE TRIGGER production_welds_append_only BEFORE UPDATE OR DELETE ON production_welds
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER production_welds_no_truncate BEFORE TRUNCATE ON production_welds
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();

-- etchlog_production_month makes sure the partition of the month holding
-- day exists (UTC months, 1900-01 to next month) and returns its name. It
-- creates an empty table and attaches it, which locks the parent only in
-- SHARE UPDATE EXCLUSIVE mode: writers and readers of other months go on.
CREATE FUNCTION etchlog_production_month(day date) RETURNS text
LANGUAGE plpgsql SECURITY DEFINER SET search_path = public, pg_temp AS $$
DECLARE
    m    date := date_trunc('month', day)::date;
    name text := format('production_records_y%sm%s', to_char(m, 'YYYY'), to_char(m, 'MM'));
    lo   timestamptz := m::timestamp AT TIME ZONE 'UTC';
    hi   timestamptz := (m + interval '1 month')::timestamp AT TIME ZONE 'UTC';
BEGIN
    IF m IS NULL OR m < date '1900-01-01' OR m > date_trunc('month', now() AT TIME ZONE 'UTC' + interval '1 month')::date THEN
        RAISE EXCEPTION 'no production month for %: months run from 1900-01 to next month', day
            USING ERRCODE = 'invalid_parameter_value';
    END IF;
    IF EXISTS (SELECT 1 FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid
               WHERE i.inhparent = 'production_records'::regclass AND c.relname = name) THEN
        RETURN name;
    END IF;
    PERFORM pg_advisory_xact_lock(hashtextextended('etchlog-production-month', 0));
    IF EXISTS (SELECT 1 FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid
               WHERE i.inhparent = 'production_records'::regclass AND c.relname = name) THEN
        RETURN name;
    END IF;
    IF to_regclass(name) IS NOT NULL THEN -- a detached month takes new records in a fresh table
        name := name || '_' || to_char(clock_timestamp() AT TIME ZONE 'UTC', 'YYYYMMDD"t"HH24MISS');
    END IF;
    EXECUTE format('CREATE TABLE %I (LIKE production_records INCLUDING DEFAULTS INCLUDING CONSTRAINTS)', name);
    EXECUTE format('ALTER TABLE production_records ATTACH PARTITION %I FOR VALUES FROM (%L) TO (%L)', name, lo, hi);
    EXECUTE format('CREATE TRIGGER %I BEFORE TRUNCATE ON %I FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only()',
        name || '_no_truncate', name);
    EXECUTE format('REVOKE ALL ON %I FROM etchlog_app', name); -- reached through the parent only
    RETURN name;
END $$;
REVOKE ALL ON FUNCTION etchlog_production_month(date) FROM PUBLIC;
GRANT EXECUTE ON FUNCTION etchlog_production_month(date) TO etchlog_app;

-- etchlog_detach_production_month moves a whole past month out of the live
-- table into production_records_detached and records the detachment; it is
-- for the owner (an administrator), never the service. It refuses a month
-- that is not over, and one with a record still waiting for its log leaf.
-- The month's records leave the lists and the flags; export and verify
-- still read them here.
CREATE FUNCTION etchlog_detach_production_month(day date, operator text) RETURNS bigint
LANGUAGE plpgsql SET search_path = public, pg_temp AS $$
DECLARE
    m     date := date_trunc('month', day)::date;
    lo    timestamptz := m::timestamp AT TIME ZONE 'UTC';
    hi    timestamptz := (m + interval '1 month')::timestamp AT TIME ZONE 'UTC';
    part  regclass;
    n     bigint;
BEGIN
    IF operator IS NULL OR operator = '' THEN
        RAISE EXCEPTION 'name the operator who detaches the month' USING ERRCODE = 'invalid_parameter_value';
    END IF;
    IF hi > now() THEN
        RAISE EXCEPTION 'month % is not over yet', to_char(m, 'YYYY-MM') USING ERRCODE = 'invalid_parameter_value';
    END IF;
    SELECT i.inhrelid::regclass INTO part FROM pg_inherits i
    WHERE i.inhparent = 'production_records'::regclass
      AND pg_get_expr((SELECT relpartbound FROM pg_class WHERE oid = i.inhrelid), i.inhrelid)
          = format('FOR VALUES FROM (%L) TO (%L)', lo, hi);
    IF part IS NULL THEN
        RAISE EXCEPTION 'no live partition for month %', to_char(m, 'YYYY-MM') USING ERRCODE = 'undefined_table';
    END IF;
    EXECUTE format('LOCK TABLE production_records IN ACCESS EXCLUSIVE MODE');
    EXECUTE format('SELECT count(*) FROM %s r WHERE EXISTS (SELECT 1 FROM log_pending p
        WHERE p.site = r.site AND p.kind = %L AND p.record_id = r.id)', part, 'production_record') INTO n;
    IF n > 0 THEN
        RAISE EXCEPTION '% records of month % still wait for their log leaf; try again when the sequencer has run', n, to_char(m, 'YYYY-MM')
            USING ERRCODE = 'object_in_use';
    END IF;
    -- Flags are derived from the live records only (a change of ranges
    -- re-evaluates the live months): the detached month's go with it.
    EXECUTE format('DELETE FROM flags f USING %s r WHERE f.site = r.site
        AND f.subject_kind = %L AND f.subject_id = r.id', part, 'production_record');
    EXECUTE format('INSERT INTO production_detachments (month, site, record_count, detached_at, detached_by)
        SELECT %L, site, count(*), now(), %L FROM %s GROUP BY site', m, operator, part);
    EXECUTE format('SELECT count(*) FROM %s', part) INTO n;
    EXECUTE format('ALTER TABLE production_records DETACH PARTITION %s', part);
    EXECUTE format('ALTER TABLE production_records_detached ATTACH PARTITION %s FOR VALUES FROM (%L) TO (%L)', part, lo, hi);
    RETURN n;
END $$;
REVOKE ALL ON FUNCTION etchlog_detach_production_month(date, text) FROM PUBLIC;

-- The records stored so far, month by month.
SELECT etchlog_production_month(d) FROM (
    SELECT DISTINCT date_trunc('month', recorded_at AT TIME ZONE 'UTC')::date AS d FROM production_records_before_months) m;
INSERT INTO production_records SELECT * FROM production_records_before_months;
INSERT INTO production_welds (site, procedure_id, weld_id, record_id)
    SELECT site, procedure_id, weld_id, id FROM production_records_before_months;
DROP TABLE production_records_before_months;
