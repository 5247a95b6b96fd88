-- Requirements, sensible sections and the engineer's choice of model.
--
-- flags: two more kinds. "requirement": a measured section below a minimum
-- the procedure or the qualification record states; "suspect_units": a
-- measured value plausible only in the other unit.
ALTER TABLE flags DROP CONSTRAINT flags_kind_check;
ALTER TABLE flags ADD CONSTRAINT flags_kind_check
    CHECK (kind IN ('range', 'not_checkable', 'model', 'requirement', 'suspect_units'));

-- A qualification record may state its own acceptance criterion: the
-- minimum penetration its macro-etch sections must show (mm).
ALTER TABLE qualification_records ADD COLUMN min_penetration_mm double precision
    CHECK (min_penetration_mm > 0 AND min_penetration_mm <= 50);

-- A section label names one section of one coupon: a second current,
-- non-voided measurement with the same label (compared trimmed and without
-- case) on the same coupon is refused. The records are append-only with
-- revisions, so a unique index cannot say "current"; this trigger does, under
-- a per-coupon lock so two writers cannot both pass. DETAIL carries the id
-- of the existing section.
CREATE FUNCTION etchlog_section_unique() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    other uuid;
BEGIN
    IF NEW.voided THEN
        RETURN NEW;
    END IF;
    PERFORM pg_advisory_xact_lock(hashtextextended('etchlog-sections:' || NEW.coupon_id::text, 0));
    SELECT cur.id INTO other FROM (
        SELECT DISTINCT ON (id) id, voided, section FROM measurements
        WHERE site = NEW.site AND coupon_id = NEW.coupon_id AND id <> NEW.id
        ORDER BY id, revision DESC) cur
    WHERE NOT cur.voided AND lower(btrim(cur.section)) = lower(btrim(NEW.section))
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

-- The engineer chooses the model: per group, the latest activation or
-- deactivation of a penetration model (jackson_fixed, jackson_free) decides,
-- and of lesnewich for melting. A deactivation leaves the group without one.
ALTER TABLE calibration_activations ADD COLUMN action text NOT NULL DEFAULT 'activate'
    CHECK (action IN ('activate', 'deactivate'));
-- family is derived from the model (generated: the rows are append-only).
ALTER TABLE calibration_activations ADD COLUMN family text NOT NULL
    GENERATED ALWAYS AS (CASE WHEN model = 'lesnewich' THEN 'melting' ELSE 'penetration' END) STORED;
CREATE INDEX calibration_activations_family_latest ON calibration_activations
    (site, family, process, wire_diameter_mm, shielding_gas, joint_type, activated_at DESC, id DESC);

ALTER TABLE audit_events DROP CONSTRAINT audit_events_action_check;
ALTER TABLE audit_events ADD CONSTRAINT audit_events_action_check
    CHECK (action IN ('create', 'correct', 'void', 'activate', 'deactivate'));
