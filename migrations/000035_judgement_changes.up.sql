-- judgement_changes: one row for each committed change of what a procedure's
-- coupons are judged by, appended by the triggers below in the transaction
-- that makes the change: a revision of the procedure, a version of its
-- ranges, a revision of a qualification record it names as support (the
-- ranges' staleness), an activation event of its process (the calibration
-- in use, and whether the process was ever calibrated).
--
-- A coupon create may keep what it read of a procedure in its process and
-- judge later coupons by it without reading it again: it reads the
-- procedure's count of rows here before the rest, and compares it in the
-- statement that writes the coupon, under the procedure's shared flag lock.
-- Rows are only ever added, so the count changes whenever such a change has
-- committed meanwhile, in any process; the write then fails and runs again
-- on what it reads afresh. The triggers fire on every insert, whichever
-- code path or login makes it.
CREATE TABLE judgement_changes (
    site         text   NOT NULL,
    procedure_id uuid   NOT NULL,
    seq          bigint GENERATED ALWAYS AS IDENTITY,
    PRIMARY KEY (site, procedure_id, seq)
);
CREATE TRIGGER judgement_changes_append_only BEFORE UPDATE OR DELETE ON judgement_changes
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER judgement_changes_no_truncate BEFORE TRUNCATE ON judgement_changes
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();

CREATE FUNCTION etchlog_procedure_changed() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO judgement_changes (site, procedure_id) SELECT DISTINCT site, id FROM new_rows;
    RETURN NULL;
END;
$$;
CREATE TRIGGER procedures_judgement AFTER INSERT ON procedures
    REFERENCING NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION etchlog_procedure_changed();

CREATE FUNCTION etchlog_ranges_changed() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO judgement_changes (site, procedure_id) SELECT DISTINCT site, procedure_id FROM new_rows;
    RETURN NULL;
END;
$$;
CREATE TRIGGER procedure_ranges_judgement AFTER INSERT ON procedure_ranges
    REFERENCING NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION etchlog_ranges_changed();

-- A qualification record: every procedure of its site any revision of which
-- names it as support.
CREATE FUNCTION etchlog_support_changed() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO judgement_changes (site, procedure_id)
    SELECT DISTINCT p.site, p.id
    FROM (SELECT site, array_agg(id) AS ids FROM new_rows GROUP BY site) q
    JOIN procedures p ON p.site = q.site AND p.supporting_record_ids && q.ids;
    RETURN NULL;
END;
$$;
CREATE TRIGGER qualification_records_judgement AFTER INSERT ON qualification_records
    REFERENCING NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION etchlog_support_changed();

-- An activation event: every procedure of its site any revision of which is
-- of its process (the procedures whose flag locks the activation takes).
CREATE FUNCTION etchlog_activation_changed() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO judgement_changes (site, procedure_id)
    SELECT DISTINCT p.site, p.id
    FROM (SELECT DISTINCT site, process FROM new_rows) a
    JOIN procedures p ON p.site = a.site AND p.process = a.process;
    RETURN NULL;
END;
$$;
CREATE TRIGGER calibration_activations_judgement AFTER INSERT ON calibration_activations
    REFERENCING NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION etchlog_activation_changed();

