-- The check that a coupon has one current section per label reads the
-- coupon's sections by coupon_id alone, then compares the site: the planner
-- then always walks measurements_coupon_current (coupon_id, id, revision
-- DESC), a handful of rows. Filtering by site in the same scan let it pick a
-- bitmap AND with the site's index while the table's statistics were young,
-- reading every section of the site for each new one (a large import slowed
-- quadratically). The rule and its words are unchanged.
CREATE OR REPLACE FUNCTION etchlog_section_unique() RETURNS trigger LANGUAGE plpgsql AS $$
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
