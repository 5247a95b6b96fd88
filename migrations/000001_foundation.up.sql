-- Foundation schema: procedures (WPS), qualification records (PQR), coupons and
-- macro-etch measurements, all append-only. A correction or a void is a new row
-- with a higher revision; nothing is updated or deleted in place. Every write also
-- appends an audit event to a per-site hash chain so an auditor can verify that
-- nothing was altered afterwards.
--
-- Units inside: mm, mm/s (travel speed), m/min (wire feed speed), A, V, °C.

CREATE TABLE procedures (
    site                  text        NOT NULL,
    id                    uuid        NOT NULL,
    revision              integer     NOT NULL CHECK (revision >= 1),
    created_at            timestamptz NOT NULL,
    created_by            text        NOT NULL CHECK (created_by <> ''),
    reason                text        NOT NULL DEFAULT '',
    voided                boolean     NOT NULL DEFAULT false,
    code                  text        NOT NULL CHECK (length(code) BETWEEN 1 AND 64),
    title                 text        NOT NULL CHECK (length(title) BETWEEN 1 AND 200),
    process               text        NOT NULL CHECK (process IN ('GMAW', 'FCAW', 'GTAW', 'SMAW', 'SAW')),
    filler_classification text        NOT NULL CHECK (length(filler_classification) BETWEEN 1 AND 64),
    wire_diameter_mm      double precision NOT NULL CHECK (wire_diameter_mm BETWEEN 0.6 AND 4.0),
    shielding_gas         text        NOT NULL DEFAULT '',
    polarity              text        NOT NULL CHECK (polarity IN ('DCEP', 'DCEN', 'AC')),
    transfer_mode         text        NOT NULL DEFAULT '' CHECK (transfer_mode IN ('', 'short_circuit', 'globular', 'spray', 'pulsed_spray')),
    positions             text[]      NOT NULL CHECK (cardinality(positions) >= 1),
    base_metal_group      text        NOT NULL CHECK (length(base_metal_group) BETWEEN 1 AND 64),
    thickness_min_mm      double precision NOT NULL CHECK (thickness_min_mm BETWEEN 0.5 AND 300),
    thickness_max_mm      double precision NOT NULL CHECK (thickness_max_mm BETWEEN 0.5 AND 300),
    min_penetration_mm    double precision CHECK (min_penetration_mm > 0 AND min_penetration_mm <= 50),
    status                text        NOT NULL CHECK (status IN ('draft', 'qualified', 'superseded')),
    supporting_record_ids uuid[]      NOT NULL DEFAULT '{}',
    PRIMARY KEY (id, revision),
    CHECK (thickness_min_mm <= thickness_max_mm),
    CHECK (revision = 1 OR reason <> '')
);
CREATE UNIQUE INDEX procedures_code_key ON procedures (site, code) WHERE revision = 1;
CREATE INDEX procedures_site_id ON procedures (site, id, revision DESC);

CREATE TABLE qualification_records (
    site                  text        NOT NULL,
    id                    uuid        NOT NULL,
    revision              integer     NOT NULL CHECK (revision >= 1),
    created_at            timestamptz NOT NULL,
    created_by            text        NOT NULL CHECK (created_by <> ''),
    reason                text        NOT NULL DEFAULT '',
    voided                boolean     NOT NULL DEFAULT false,
    record_number         text        NOT NULL CHECK (length(record_number) BETWEEN 1 AND 64),
    process               text        NOT NULL CHECK (process IN ('GMAW', 'FCAW', 'GTAW', 'SMAW', 'SAW')),
    welded_on             date        NOT NULL,
    welder_id             text        NOT NULL CHECK (length(welder_id) BETWEEN 1 AND 64),
    filler_classification text        NOT NULL CHECK (length(filler_classification) BETWEEN 1 AND 64),
    wire_diameter_mm      double precision NOT NULL CHECK (wire_diameter_mm BETWEEN 0.6 AND 4.0),
    shielding_gas         text        NOT NULL DEFAULT '',
    polarity              text        NOT NULL CHECK (polarity IN ('DCEP', 'DCEN', 'AC')),
    transfer_mode         text        NOT NULL DEFAULT '' CHECK (transfer_mode IN ('', 'short_circuit', 'globular', 'spray', 'pulsed_spray')),
    position              text        NOT NULL CHECK (length(position) BETWEEN 1 AND 8),
    base_metal_group      text        NOT NULL CHECK (length(base_metal_group) BETWEEN 1 AND 64),
    thickness_mm          double precision NOT NULL CHECK (thickness_mm BETWEEN 0.5 AND 300),
    current_a             double precision NOT NULL CHECK (current_a BETWEEN 10 AND 1000),
    voltage_v             double precision NOT NULL CHECK (voltage_v BETWEEN 5 AND 60),
    travel_speed_mm_s     double precision NOT NULL CHECK (travel_speed_mm_s BETWEEN 0.5 AND 30),
    wire_feed_speed_m_min double precision CHECK (wire_feed_speed_m_min BETWEEN 0.5 AND 30),
    ctwd_mm               double precision CHECK (ctwd_mm BETWEEN 3 AND 50),
    preheat_c             double precision CHECK (preheat_c BETWEEN -20 AND 350),
    interpass_c           double precision CHECK (interpass_c BETWEEN -20 AND 350),
    visual_result         text        NOT NULL CHECK (visual_result IN ('pass', 'fail', 'not_tested')),
    bend_result           text        NOT NULL CHECK (bend_result IN ('pass', 'fail', 'not_tested')),
    tensile_result        text        NOT NULL CHECK (tensile_result IN ('pass', 'fail', 'not_tested')),
    macro_result          text        NOT NULL CHECK (macro_result IN ('pass', 'fail', 'not_tested')),
    tensile_strength_mpa  double precision CHECK (tensile_strength_mpa > 0 AND tensile_strength_mpa <= 2000),
    outcome               text        NOT NULL CHECK (outcome IN ('pending', 'pass', 'fail')),
    remarks               text        NOT NULL DEFAULT '',
    PRIMARY KEY (id, revision),
    CHECK (revision = 1 OR reason <> '')
);
CREATE UNIQUE INDEX qualification_records_number_key ON qualification_records (site, record_number) WHERE revision = 1;
CREATE INDEX qualification_records_site_id ON qualification_records (site, id, revision DESC);

CREATE TABLE coupons (
    site                    text        NOT NULL,
    id                      uuid        NOT NULL,
    revision                integer     NOT NULL CHECK (revision >= 1),
    created_at              timestamptz NOT NULL,
    created_by              text        NOT NULL CHECK (created_by <> ''),
    reason                  text        NOT NULL DEFAULT '',
    voided                  boolean     NOT NULL DEFAULT false,
    procedure_id            uuid,
    qualification_record_id uuid,
    coupon_mark             text        NOT NULL CHECK (length(coupon_mark) BETWEEN 1 AND 64),
    welder_id               text        NOT NULL CHECK (length(welder_id) BETWEEN 1 AND 64),
    power_source_id         text        NOT NULL DEFAULT '',
    filler_lot              text        NOT NULL DEFAULT '',
    welded_on               date        NOT NULL,
    joint_type              text        NOT NULL CHECK (joint_type IN ('bead_on_plate', 'butt', 'fillet', 'lap', 'corner', 'edge')),
    thickness_mm            double precision NOT NULL CHECK (thickness_mm BETWEEN 0.5 AND 300),
    pass_number             integer     NOT NULL CHECK (pass_number BETWEEN 1 AND 500),
    current_a               double precision NOT NULL CHECK (current_a BETWEEN 10 AND 1000),
    voltage_v               double precision NOT NULL CHECK (voltage_v BETWEEN 5 AND 60),
    travel_speed_mm_s       double precision NOT NULL CHECK (travel_speed_mm_s BETWEEN 0.5 AND 30),
    wire_feed_speed_m_min   double precision CHECK (wire_feed_speed_m_min BETWEEN 0.5 AND 30),
    ctwd_mm                 double precision CHECK (ctwd_mm BETWEEN 3 AND 50),
    wire_diameter_mm        double precision NOT NULL CHECK (wire_diameter_mm BETWEEN 0.6 AND 4.0),
    shielding_gas           text        NOT NULL DEFAULT '',
    polarity                text        NOT NULL CHECK (polarity IN ('DCEP', 'DCEN', 'AC')),
    position                text        NOT NULL CHECK (length(position) BETWEEN 1 AND 8),
    preheat_c               double precision CHECK (preheat_c BETWEEN -20 AND 350),
    interpass_c             double precision CHECK (interpass_c BETWEEN -20 AND 350),
    PRIMARY KEY (id, revision),
    CHECK (procedure_id IS NOT NULL OR qualification_record_id IS NOT NULL),
    CHECK (revision = 1 OR reason <> '')
);
CREATE UNIQUE INDEX coupons_mark_key ON coupons (site, coupon_mark) WHERE revision = 1;
CREATE INDEX coupons_site_id ON coupons (site, id, revision DESC);

CREATE TABLE measurements (
    site             text        NOT NULL,
    id               uuid        NOT NULL,
    revision         integer     NOT NULL CHECK (revision >= 1),
    created_at       timestamptz NOT NULL,
    created_by       text        NOT NULL CHECK (created_by <> ''),
    reason           text        NOT NULL DEFAULT '',
    voided           boolean     NOT NULL DEFAULT false,
    coupon_id        uuid        NOT NULL,
    section          text        NOT NULL CHECK (length(section) BETWEEN 1 AND 32),
    penetration_mm   double precision NOT NULL CHECK (penetration_mm >= 0 AND penetration_mm <= 50),
    bead_width_mm    double precision NOT NULL CHECK (bead_width_mm > 0 AND bead_width_mm <= 100),
    reinforcement_mm double precision NOT NULL CHECK (reinforcement_mm BETWEEN -10 AND 30),
    leg1_mm          double precision CHECK (leg1_mm > 0 AND leg1_mm <= 100),
    leg2_mm          double precision CHECK (leg2_mm > 0 AND leg2_mm <= 100),
    throat_mm        double precision CHECK (throat_mm > 0 AND throat_mm <= 100),
    fused_area_mm2   double precision CHECK (fused_area_mm2 > 0 AND fused_area_mm2 <= 10000),
    acceptance       text        NOT NULL CHECK (acceptance IN ('accept', 'reject')),
    inspector        text        NOT NULL CHECK (length(inspector) BETWEEN 1 AND 64),
    remark           text        NOT NULL DEFAULT '',
    PRIMARY KEY (id, revision),
    CHECK (revision = 1 OR reason <> '')
);
CREATE INDEX measurements_site_id ON measurements (site, id, revision DESC);
CREATE INDEX measurements_coupon ON measurements (coupon_id);

-- Audit chain: one event per write, hash = sha256(previous hash || event text).
CREATE TABLE audit_events (
    site       text        NOT NULL,
    seq        bigint      NOT NULL,
    at         timestamptz NOT NULL,
    actor      text        NOT NULL,
    action     text        NOT NULL CHECK (action IN ('create', 'correct', 'void')),
    entity     text        NOT NULL,
    entity_id  uuid        NOT NULL,
    revision   integer     NOT NULL,
    reason     text        NOT NULL,
    payload    jsonb       NOT NULL,
    prev_hash  bytea       NOT NULL,
    hash       bytea       NOT NULL,
    PRIMARY KEY (site, seq)
);
CREATE INDEX audit_events_entity ON audit_events (entity, entity_id, revision);

-- The chain link: sha256 over the previous hash and a fixed text form of the event.
-- Timestamps enter as epoch microseconds so the text does not depend on TimeZone.
CREATE FUNCTION etchlog_audit_hash(prev bytea, seq bigint, at timestamptz, actor text, action text,
                                   entity text, entity_id uuid, revision integer, reason text, payload jsonb)
RETURNS bytea LANGUAGE sql IMMUTABLE AS $$
    SELECT sha256(prev || convert_to(concat_ws(E'\x1f', seq::text,
        (extract(epoch FROM at) * 1000000)::bigint::text, actor, action, entity,
        entity_id::text, revision::text, reason, payload::text), 'UTF8'))
$$;

-- Append-only: refuse UPDATE and DELETE on every record table.
CREATE FUNCTION etchlog_append_only() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'etchlog: % on % is not allowed: records are append-only', TG_OP, TG_TABLE_NAME
        USING ERRCODE = 'insufficient_privilege';
END;
$$;
CREATE TRIGGER procedures_append_only BEFORE UPDATE OR DELETE ON procedures
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER qualification_records_append_only BEFORE UPDATE OR DELETE ON qualification_records
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER coupons_append_only BEFORE UPDATE OR DELETE ON coupons
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER measurements_append_only BEFORE UPDATE OR DELETE ON measurements
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER audit_events_append_only BEFORE UPDATE OR DELETE ON audit_events
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();

-- API users: bearer tokens are stored only as SHA-256 digests.
CREATE TABLE api_users (
    site         text        NOT NULL,
    name         text        NOT NULL CHECK (length(name) BETWEEN 1 AND 64),
    role         text        NOT NULL CHECK (role IN ('technician', 'engineer', 'auditor')),
    token_sha256 bytea       NOT NULL UNIQUE,
    created_at   timestamptz NOT NULL,
    PRIMARY KEY (site, name)
);
