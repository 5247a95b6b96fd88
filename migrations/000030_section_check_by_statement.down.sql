-- The section check as migration 000016 left it: a BEFORE INSERT row trigger.
DROP TRIGGER measurements_section_unique ON measurements;
DROP FUNCTION etchlog_section_unique();
CREATE FUNCTION etchlog_section_unique() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    other uuid;
BEGIN
    IF NEW.voided THEN
        RETURN NEW;
    END IF;
    PERFORM pg_advisory_xact_lock(hashtextextended('etchlog-sections:' || NEW.coupon_id::text, 0));
    SELECT cur.id INTO other FROM (
        SELECT DISTINCT ON (id) id, site, voided, section FROM measurements
        WHERE coupon_id = NEW.coupon_id AND id <> NEW.id
        ORDER BY id, revision DESC) cur
    WHERE cur.site = NEW.site AND NOT cur.voided AND lower(btrim(cur.section)) = lower(btrim(NEW.section))
    LIMIT 1;
    IF other IS NOT NULL THEN
        RAISE EXCEPTION 'etchlog: coupon % already has a section %', NEW.coupon_id, NEW.section
            USING ERRCODE = 'unique_violation', CONSTRAINT = 'measurements_section_per_coupon', DETAIL = other::text;
    END IF;
    RETURN NEW;
END;
$$;
CREATE TRIGGER measurements_section_unique BEFORE INSERT ON measurements
    FOR EACH ROW EXECUTE FUNCTION etchlog_section_unique();
