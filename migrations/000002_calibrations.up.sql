-- Calibrations: model coefficients fitted to a group of the site's own coupons,
-- and the activations that say which calibration the service uses for a group.
-- Both tables are append-only like every record table: a new fit is a new
-- calibration, a change of mind is a new activation; nothing is updated or
-- deleted. Each row has revision 1 only, so the audit chain covers it like
-- every other record.
--
-- Group key: process (from the coupon's procedure, else its qualification
-- record), wire diameter in mm rounded to 0.001 mm, shielding gas (exact text)
-- and joint type. Units inside: mm, A, V, mm/s, kg/h.

CREATE TABLE calibrations (
    site             text        NOT NULL,
    id               uuid        NOT NULL PRIMARY KEY,
    revision         integer     NOT NULL DEFAULT 1 CHECK (revision = 1),
    created_at       timestamptz NOT NULL,
    created_by       text        NOT NULL CHECK (created_by <> ''),
    model            text        NOT NULL CHECK (model IN ('jackson_fixed', 'jackson_free', 'lesnewich')),
    process          text        NOT NULL CHECK (process IN ('GMAW', 'FCAW', 'GTAW', 'SMAW', 'SAW')),
    wire_diameter_mm double precision NOT NULL CHECK (wire_diameter_mm BETWEEN 0.6 AND 4.0),
    shielding_gas    text        NOT NULL CHECK (length(shielding_gas) <= 64),
    joint_type       text        NOT NULL CHECK (joint_type IN ('bead_on_plate', 'butt', 'fillet', 'lap', 'corner', 'edge')),
    welded_from      date,
    welded_to        date,
    procedure_id     uuid,
    level            double precision NOT NULL CHECK (level > 0 AND level < 1),
    -- Lesnewich only: extension = CTWD − arc_length_mm for every coupon.
    arc_length_mm    double precision CHECK (arc_length_mm > 0 AND arc_length_mm <= 50),
    fit              jsonb       NOT NULL,
    samples          jsonb       NOT NULL,
    coupon_ids       uuid[]      NOT NULL CHECK (cardinality(coupon_ids) >= 2),
    note             text        NOT NULL DEFAULT '' CHECK (length(note) <= 2000),
    CHECK (welded_from IS NULL OR welded_to IS NULL OR welded_from <= welded_to),
    CHECK ((model = 'lesnewich') = (arc_length_mm IS NOT NULL))
);
CREATE INDEX calibrations_site_id ON calibrations (site, id);

CREATE TABLE calibration_activations (
    site             text        NOT NULL,
    id               uuid        NOT NULL PRIMARY KEY,
    revision         integer     NOT NULL DEFAULT 1 CHECK (revision = 1),
    activated_at     timestamptz NOT NULL,
    activated_by     text        NOT NULL CHECK (activated_by <> ''),
    reason           text        NOT NULL CHECK (reason <> '' AND length(reason) <= 2000),
    calibration_id   uuid        NOT NULL REFERENCES calibrations (id),
    -- The group key and model are copied from the calibration when it is activated.
    model            text        NOT NULL,
    process          text        NOT NULL,
    wire_diameter_mm double precision NOT NULL,
    shielding_gas    text        NOT NULL,
    joint_type       text        NOT NULL
);
-- The active calibration of a group and model is its latest activation.
CREATE INDEX calibration_activations_latest ON calibration_activations
    (site, model, process, wire_diameter_mm, shielding_gas, joint_type, activated_at DESC, id DESC);
CREATE INDEX calibration_activations_calibration ON calibration_activations (calibration_id);

-- A fit reads the current sections of each selected coupon.
CREATE INDEX measurements_coupon_current ON measurements (coupon_id, id, revision DESC);

CREATE TRIGGER calibrations_append_only BEFORE UPDATE OR DELETE ON calibrations
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER calibration_activations_append_only BEFORE UPDATE OR DELETE ON calibration_activations
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();

-- Activating a calibration is its own audit action.
ALTER TABLE audit_events DROP CONSTRAINT audit_events_action_check;
ALTER TABLE audit_events ADD CONSTRAINT audit_events_action_check
    CHECK (action IN ('create', 'correct', 'void', 'activate'));
