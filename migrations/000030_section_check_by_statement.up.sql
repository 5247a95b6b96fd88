-- The check that a coupon has one current section per label runs once per
-- statement instead of once per row: an AFTER INSERT statement trigger reads
-- the statement's new rows (a transition table), locks their coupons in
-- coupon order, then looks for a second current, non-voided section with the
-- same label (trimmed, without case) on each of those coupons. A single
-- section's write is checked exactly as before, under the same per-coupon
-- lock, with the same error; a write of many sections (an import, a COPY)
-- no longer runs a function per row, and COPY can write its rows in batches
-- again, which it cannot do while a BEFORE ROW trigger is on the table.
-- Rows of the same statement see one another: two new sections of one
-- coupon with one label are refused like a new one beside a stored one.
DROP TRIGGER measurements_section_unique ON measurements;
DROP FUNCTION etchlog_section_unique();

CREATE FUNCTION etchlog_section_unique() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    hit record;
BEGIN
    PERFORM pg_advisory_xact_lock(hashtextextended('etchlog-sections:' || l.coupon_id::text, 0))
    FROM (SELECT DISTINCT coupon_id FROM new_sections WHERE NOT voided ORDER BY coupon_id) l;
    -- Per new row, the coupon's current sections by coupon_id alone
    -- (measurements_coupon_current, a handful of rows), then the site.
    SELECT n.coupon_id, n.section, o.id AS other INTO hit
    FROM new_sections n
    CROSS JOIN LATERAL (
        SELECT cur.id FROM (
            SELECT DISTINCT ON (id) id, site, voided, section FROM measurements
            WHERE coupon_id = n.coupon_id AND id <> n.id
            ORDER BY id, revision DESC) cur
        WHERE cur.site = n.site AND NOT cur.voided AND lower(btrim(cur.section)) = lower(btrim(n.section))
        LIMIT 1) o
    WHERE NOT n.voided
    ORDER BY n.coupon_id, n.id
    LIMIT 1;
    IF FOUND THEN
        RAISE EXCEPTION 'etchlog: coupon % already has a section %', hit.coupon_id, hit.section
            USING ERRCODE = 'unique_violation', CONSTRAINT = 'measurements_section_per_coupon', DETAIL = hit.other::text;
    END IF;
    RETURN NULL;
END;
$$;
CREATE TRIGGER measurements_section_unique AFTER INSERT ON measurements
    REFERENCING NEW TABLE AS new_sections
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_section_unique();
