-- The production records list's key. Lists page in log order; a leaf does
-- not hold recorded_at, the key of the month partitions, so finding a
-- leaf's record probed every month, and a filtered page read every matching
-- record and its leaf before it could order them by log index (by procedure
-- 0.4-0.7 s a page at 1,000,000 records over 91 months). production_list
-- holds one row per logged live production record: its log index and the
-- columns the list filters on, each filter with an index (site, <column>,
-- leaf_index), so a page reads only its own entries in log order and then
-- its rows by key. It holds every column of the record (as coupon_list
-- does): reading a page's records from production_records by id and
-- recorded_at opened every month's partition and index per page (the
-- month is known only as each row is looked up), which cost more than the
-- page itself.
--
-- The sequencer cannot read those columns cheaply (a lookup by id probes
-- every month), so the write that stores the records also stores them in
-- production_list_pending, one row per pending log entry (entry_id: the
-- entry's record_id, a batch for an entry of many leaves) holding its
-- records' columns as arrays in the entry's order, so a write of 5,000
-- records adds one row. The sequencer, in the
-- transaction that gives the entry's records their leaves, deletes that row
-- and writes their production_list rows with their log indexes
-- (db/production_list.go). Both tables are derived from records and log;
-- Store.RecheckProductionList compares them with production_list_derived and
-- the pending entries.
CREATE VIEW production_list_derived AS
SELECT r.*, lg.leaf_index,
       (r.recorded_at AT TIME ZONE 'UTC')::date AS recorded_day,
       date_trunc('month', r.recorded_at AT TIME ZONE 'UTC')::date AS recorded_month
FROM production_records r
JOIN log_leaves lg ON lg.site = r.site AND lg.record_id = r.id AND lg.kind = 'production_record';

CREATE TABLE production_list AS SELECT * FROM production_list_derived WITH NO DATA;
ALTER TABLE production_list ADD PRIMARY KEY (site, id),
    ALTER COLUMN batch_id SET NOT NULL, ALTER COLUMN procedure_id SET NOT NULL,
    ALTER COLUMN weld_id SET NOT NULL, ALTER COLUMN welder_id SET NOT NULL,
    ALTER COLUMN recorded_at SET NOT NULL, ALTER COLUMN current_a SET NOT NULL,
    ALTER COLUMN voltage_v SET NOT NULL, ALTER COLUMN travel_speed_mm_s SET NOT NULL,
    ALTER COLUMN wire_feed_speed_m_min SET NOT NULL, ALTER COLUMN created_at SET NOT NULL,
    ALTER COLUMN created_by SET NOT NULL, ALTER COLUMN leaf_index SET NOT NULL,
    ALTER COLUMN recorded_day SET NOT NULL, ALTER COLUMN recorded_month SET NOT NULL;

-- One row per pending entry: what every record of a write shares, then
-- each column of its records as an array, in the entry's order.
CREATE TABLE production_list_pending (
    site                   text               NOT NULL,
    entry_id               uuid               NOT NULL,
    batch_id               uuid               NOT NULL,
    created_at             timestamptz        NOT NULL,
    created_by             text               NOT NULL,
    ids                    uuid[]             NOT NULL,
    procedure_ids          uuid[]             NOT NULL,
    weld_ids               text[]             NOT NULL,
    welder_ids             text[]             NOT NULL,
    recorded_ats           timestamptz[]      NOT NULL,
    currents_a             double precision[] NOT NULL,
    voltages_v             double precision[] NOT NULL,
    travel_speeds_mm_s     double precision[] NOT NULL,
    wire_feed_speeds_m_min double precision[] NOT NULL,
    ctwds_mm               double precision[] NOT NULL,
    PRIMARY KEY (site, entry_id)
);

-- What the sequencer has still to move: the records of each pending entry
-- as production_list_pending holds them, and as the records and the log
-- say (Store.RecheckProductionList compares the two).
CREATE VIEW production_list_pending_rows AS
SELECT w.site, r.id, w.batch_id, w.created_at, w.created_by, r.procedure_id, r.weld_id, r.welder_id, r.recorded_at,
       r.current_a, r.voltage_v, r.travel_speed_mm_s, r.wire_feed_speed_m_min, r.ctwd_mm, w.entry_id
FROM production_list_pending w
CROSS JOIN LATERAL unnest(w.ids, w.procedure_ids, w.weld_ids, w.welder_ids, w.recorded_ats, w.currents_a, w.voltages_v,
    w.travel_speeds_mm_s, w.wire_feed_speeds_m_min, w.ctwds_mm)
    AS r(id, procedure_id, weld_id, welder_id, recorded_at, current_a, voltage_v, travel_speed_mm_s, wire_feed_speed_m_min, ctwd_mm);
CREATE VIEW production_list_pending_derived AS
SELECT r.*, p.record_id AS entry_id
FROM log_pending p
CROSS JOIN LATERAL unnest(coalesce(p.record_ids, ARRAY[p.record_id])) u(id)
JOIN production_records r ON r.site = p.site AND r.id = u.id
WHERE p.kind = 'production_record';

-- Records logged before this migration (filled before the indexes exist),
-- and the records still waiting for the sequencer, per entry.
INSERT INTO production_list SELECT * FROM production_list_derived;
INSERT INTO production_list_pending
SELECT p.site, p.record_id, (array_agg(r.batch_id))[1], (array_agg(r.created_at))[1], (array_agg(r.created_by))[1],
       array_agg(r.id ORDER BY u.n), array_agg(r.procedure_id ORDER BY u.n), array_agg(r.weld_id ORDER BY u.n),
       array_agg(r.welder_id ORDER BY u.n), array_agg(r.recorded_at ORDER BY u.n), array_agg(r.current_a ORDER BY u.n),
       array_agg(r.voltage_v ORDER BY u.n), array_agg(r.travel_speed_mm_s ORDER BY u.n),
       array_agg(r.wire_feed_speed_m_min ORDER BY u.n), array_agg(r.ctwd_mm ORDER BY u.n)
FROM log_pending p
CROSS JOIN LATERAL unnest(coalesce(p.record_ids, ARRAY[p.record_id])) WITH ORDINALITY u(id, n)
JOIN production_records r ON r.site = p.site AND r.id = u.id
WHERE p.kind = 'production_record'
GROUP BY p.site, p.record_id;

-- Each filter walks its own index in log order; each carries the key and
-- what a combined filter or a time range checks, so a walk reads index
-- entries only. A time range walks
-- each day of its partial months and each whole month between.
CREATE INDEX production_list_log ON production_list (site, leaf_index) INCLUDE (id, recorded_at);
CREATE INDEX production_list_procedure ON production_list (site, procedure_id, leaf_index) INCLUDE (id, recorded_at, welder_id);
CREATE INDEX production_list_welder ON production_list (site, welder_id, leaf_index) INCLUDE (id, recorded_at, procedure_id);
CREATE INDEX production_list_weld ON production_list (site, weld_id, leaf_index) INCLUDE (id, recorded_at);
CREATE INDEX production_list_day ON production_list (site, recorded_day, leaf_index) INCLUDE (id, recorded_at);
CREATE INDEX production_list_month ON production_list (site, recorded_month, leaf_index) INCLUDE (id, recorded_at);
-- Derived: the sequencer moves an entry's rows from one table to the other.
GRANT DELETE ON production_list, production_list_pending TO etchlog_app;

-- Detaching a month also takes its records out of the list's key.
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
    -- The production list's key holds live records only.
    EXECUTE format('DELETE FROM production_list l USING %s r WHERE l.site = r.site AND l.id = r.id', part);
    EXECUTE format('INSERT INTO production_detachments (month, site, record_count, detached_at, detached_by)
        SELECT %L, site, count(*), now(), %L FROM %s GROUP BY site', m, operator, part);
    EXECUTE format('SELECT count(*) FROM %s', part) INTO n;
    EXECUTE format('ALTER TABLE production_records DETACH PARTITION %s', part);
    EXECUTE format('ALTER TABLE production_records_detached ATTACH PARTITION %s FOR VALUES FROM (%L) TO (%L)', part, lo, hi);
    RETURN n;
END $$;
