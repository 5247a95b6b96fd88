-- The detach function as before the production list's key.
CREATE OR REPLACE FUNCTION etchlog_detach_production_month(day date, operator text) RETURNS bigint
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
    IF n = 0 THEN -- records named by a pending entry of many
        EXECUTE format('SELECT count(*) FROM %s r JOIN (SELECT p.site, c.id FROM log_pending p, unnest(p.record_ids) c(id)
            WHERE p.kind = %L AND p.record_ids IS NOT NULL) w ON w.site = r.site AND w.id = r.id', part, 'production_record') INTO n;
    END IF;
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

DROP VIEW IF EXISTS production_list_pending_rows;
DROP VIEW IF EXISTS production_list_pending_derived;
DROP TABLE IF EXISTS production_list_pending;
DROP TABLE IF EXISTS production_list;
DROP VIEW IF EXISTS production_list_derived;
