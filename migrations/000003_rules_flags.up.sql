-- Qualified ranges and validation flags.
--
-- rule_sets: how a procedure's qualified range follows, per essential variable,
-- from the values welded on its qualification record(s). Versioned and
-- append-only: a new version is a new row. site '' holds the built-in sets,
-- readable by every site; a shop's own sets carry its site.
--
-- procedure_ranges: a procedure's qualified ranges, derived under one rule set
-- version and possibly narrowed by an engineer with a reason. Append-only: each
-- derivation or narrowing is a new version.
--
-- production_records: parameters logged on production welds, accepted in
-- batches (production_batches: one row and one audit event per batch). Append-only.
--
-- rule_sets, procedure_ranges and production_batches rows have an id and
-- revision 1 so that the audit chain records each like any other record.
--
-- flags: DERIVED data. One row per record and variable outside its qualified
-- range (or not checkable). A recompute deletes and rewrites a subject's or a
-- procedure's flags in the same transaction as the change that caused it, so
-- this table is not append-only: the append-only rule applies to records, and
-- every flag can be recomputed from the records, the ranges and the rule sets.
--
-- Units inside: mm, mm/s (travel speed), m/min (wire feed speed), A, V, °C, J/mm.

CREATE TABLE rule_sets (
    site        text        NOT NULL,
    id          uuid        NOT NULL PRIMARY KEY,
    revision    integer     NOT NULL DEFAULT 1 CHECK (revision = 1),
    rule_set_id text        NOT NULL CHECK (rule_set_id ~ '^[a-z0-9][a-z0-9-]{1,63}$'),
    version     integer     NOT NULL CHECK (version >= 1),
    name        text        NOT NULL CHECK (length(name) BETWEEN 1 AND 200),
    process     text        NOT NULL CHECK (process IN ('GMAW', 'FCAW', 'GTAW', 'SMAW', 'SAW')),
    notes       text        NOT NULL DEFAULT '',
    from_memory boolean     NOT NULL DEFAULT false,
    rules       jsonb       NOT NULL CHECK (jsonb_typeof(rules) = 'array'),
    created_at  timestamptz NOT NULL,
    created_by  text        NOT NULL CHECK (created_by <> ''),
    UNIQUE (site, rule_set_id, version)
);

CREATE TABLE procedure_ranges (
    site               text        NOT NULL,
    id                 uuid        NOT NULL UNIQUE,
    revision           integer     NOT NULL DEFAULT 1 CHECK (revision = 1),
    procedure_id       uuid        NOT NULL,
    procedure_revision integer     NOT NULL CHECK (procedure_revision >= 1),
    version            integer     NOT NULL CHECK (version >= 1),
    action             text        NOT NULL CHECK (action IN ('derive', 'narrow')),
    rule_set_site      text        NOT NULL,
    rule_set_id        text        NOT NULL,
    rule_set_version   integer     NOT NULL,
    reason             text        NOT NULL DEFAULT '',
    ranges             jsonb       NOT NULL,
    created_at         timestamptz NOT NULL,
    created_by         text        NOT NULL CHECK (created_by <> ''),
    PRIMARY KEY (site, procedure_id, procedure_revision, version),
    FOREIGN KEY (rule_set_site, rule_set_id, rule_set_version) REFERENCES rule_sets (site, rule_set_id, version),
    CHECK (action = 'derive' OR reason <> '')
);
CREATE UNIQUE INDEX procedure_ranges_version ON procedure_ranges (site, procedure_id, version);

-- One row per accepted batch, so a batch is one audit event (rows: production_records).
CREATE TABLE production_batches (
    site          text        NOT NULL,
    id            uuid        NOT NULL PRIMARY KEY,
    revision      integer     NOT NULL DEFAULT 1 CHECK (revision = 1),
    created_at    timestamptz NOT NULL,
    created_by    text        NOT NULL CHECK (created_by <> ''),
    record_count  integer     NOT NULL CHECK (record_count >= 1),
    first_id      uuid        NOT NULL,
    last_id       uuid        NOT NULL,
    procedure_ids uuid[]      NOT NULL
);

CREATE TABLE production_records (
    site                  text        NOT NULL,
    id                    uuid        NOT NULL PRIMARY KEY,
    batch_id              uuid        NOT NULL REFERENCES production_batches (id),
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
    created_by            text        NOT NULL CHECK (created_by <> '')
);
CREATE INDEX production_records_site_id ON production_records (site, id);
CREATE INDEX production_records_procedure ON production_records (site, procedure_id, id);

CREATE TRIGGER rule_sets_append_only BEFORE UPDATE OR DELETE ON rule_sets
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER procedure_ranges_append_only BEFORE UPDATE OR DELETE ON procedure_ranges
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER production_batches_append_only BEFORE UPDATE OR DELETE ON production_batches
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER production_records_append_only BEFORE UPDATE OR DELETE ON production_records
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();

CREATE TABLE flags (
    site           text        NOT NULL,
    subject_kind   text        NOT NULL CHECK (subject_kind IN ('coupon', 'production_record')),
    subject_id     uuid        NOT NULL,
    subject_at     timestamptz NOT NULL,
    procedure_id   uuid        NOT NULL,
    ranges_version integer     NOT NULL,
    kind           text        NOT NULL CHECK (kind IN ('range', 'not_checkable', 'model')),
    variable       text        NOT NULL,
    unit           text        NOT NULL DEFAULT '',
    value          double precision,
    value_text     text,
    min            double precision,
    max            double precision,
    allowed        text[],
    direction      text        CHECK (direction IN ('above', 'below', 'not_allowed')),
    excess         double precision,
    excess_pct     double precision,
    detail         text        NOT NULL,
    computed_at    timestamptz NOT NULL,
    PRIMARY KEY (site, subject_id, variable, kind)
);
CREATE INDEX flags_procedure ON flags (site, procedure_id, subject_id);
CREATE INDEX flags_subject_at ON flags (site, subject_at);

-- Built-in rule sets, written from memory in the style of the two most widely
-- used code families. They are starting points to verify, not a code's text:
-- copy one under your own id and correct it against the current edition of
-- your code of record. Values are in the stored units (°C differences for
-- temperatures: 25 °F of difference = 125/9 °C, 100 °F = 500/9 °C).
INSERT INTO rule_sets (site, rule_set_id, version, id, name, process, notes, from_memory, rules, created_at, created_by) VALUES
('', 'structural-style-gmaw', 1, 'a3c1e0f2-5b1d-4c8e-9f00-000000000001', 'structural-style GMAW', 'GMAW',
'From memory — verify against the current edition of your code of record. In the style of the structural-steel welding code family, for a qualified (not prequalified) GMAW procedure. '
'Recalled with fair confidence: current ±10 %, voltage ±7 %, travel speed ±25 %, wire feed speed ±10 % (percentages of the PQR value); no change of wire diameter, shielding gas composition, transfer mode, polarity or filler classification. '
'Less sure: preheat may not drop more than 25 °F (about 14 °C) below the PQR; base-metal thickness T/2 to 2T is a simplification (the code qualifies thickness in steps, with floors and "unlimited" above some thickness); '
'the position map (tested position plus flat, fillets below the groove position) is a conservative guess, not the code''s table. '
'Not included, unsure: electrode extension / CTWD limits, heat input limits for toughness-tested joints (add a heat input max by narrowing). '
'Wire diameter is "same" within 0.02 mm so that 0.035 in (0.889 mm) and 0.9 mm count as one nominal size (common practice, no source).',
true,
'[
 {"variable": "current_a", "kind": "percent_band", "below_pct": 10, "above_pct": 10},
 {"variable": "voltage_v", "kind": "percent_band", "below_pct": 7, "above_pct": 7},
 {"variable": "travel_speed_mm_s", "kind": "percent_band", "below_pct": 25, "above_pct": 25},
 {"variable": "wire_feed_speed_m_min", "kind": "percent_band", "below_pct": 10, "above_pct": 10},
 {"variable": "wire_diameter_mm", "kind": "same", "tolerance": 0.02, "note": "one nominal size; 0.02 mm is common practice, no source"},
 {"variable": "shielding_gas", "kind": "same"},
 {"variable": "transfer_mode", "kind": "same"},
 {"variable": "polarity", "kind": "same"},
 {"variable": "filler_classification", "kind": "same"},
 {"variable": "thickness_mm", "kind": "multiplier", "min_factor": 0.5, "max_factor": 2, "note": "simplified: the code uses steps and floors; unsure"},
 {"variable": "preheat_c", "kind": "absolute_band", "below": 13.88888888888889, "note": "a drop of more than 25 °F; unsure"},
 {"variable": "position", "kind": "position_map", "note": "conservative guess, not the code''s table", "positions": {
   "1G": ["1G", "1F"], "2G": ["1G", "2G", "1F", "2F"], "3G": ["1G", "3G", "1F", "3F"], "4G": ["1G", "4G", "1F", "4F"],
   "1F": ["1F"], "2F": ["1F", "2F"], "3F": ["1F", "3F"], "4F": ["1F", "4F"]}}
]'::jsonb, now(), 'etchlog'),
('', 'pressure-style-gmaw', 1, 'a3c1e0f2-5b1d-4c8e-9f00-000000000002', 'pressure-style GMAW', 'GMAW',
'From memory — verify against the current edition of your code of record. In the style of the pressure-equipment code family, where procedure essential variables are grouped as essential, supplementary essential (only when toughness/impact testing applies) and nonessential. '
'Recalled with fair confidence: base-metal group and filler grouping must not change (approximated here as the same group and the same filler classification); a change of shielding gas composition is essential; a change of transfer mode between short circuit and spray/globular/pulsed is essential ("same" here is stricter: any change); preheat may not drop more than 100 °F (about 56 °C) below the PQR. '
'Current, voltage, travel speed, wire feed speed and wire diameter are not essential for the procedure (recalled), so this set has no bands on them. Positions are not essential for the procedure (they are for the welder), so no position rule. '
'Supplementary essential, included here and to be removed when toughness testing does not apply: heat input may not exceed the PQR''s (arc energy V·I/S); interpass may not rise more than 100 °F (about 56 °C) above the PQR; polarity may not change (unsure). '
'Less sure: base-metal thickness is T/2 to 2T here; the code''s table has a 1/16 in floor and 3/16 in above some thickness, so T/2 is conservative (narrower) for thicker plates.',
true,
'[
 {"variable": "base_metal_group", "kind": "same"},
 {"variable": "filler_classification", "kind": "same", "note": "stand-in for the code''s filler grouping"},
 {"variable": "shielding_gas", "kind": "same"},
 {"variable": "transfer_mode", "kind": "same", "note": "stricter than recalled: short circuit vs the rest is what the code names"},
 {"variable": "thickness_mm", "kind": "multiplier", "min_factor": 0.5, "max_factor": 2, "note": "simplified; unsure"},
 {"variable": "preheat_c", "kind": "absolute_band", "below": 55.55555555555556, "note": "a drop of more than 100 °F"},
 {"variable": "heat_input_j_mm", "kind": "percent_band", "above_pct": 0, "note": "supplementary: toughness-tested joints only"},
 {"variable": "interpass_c", "kind": "absolute_band", "above": 55.55555555555556, "note": "supplementary: toughness-tested joints only"},
 {"variable": "polarity", "kind": "same", "note": "supplementary; unsure"}
]'::jsonb, now(), 'etchlog');
