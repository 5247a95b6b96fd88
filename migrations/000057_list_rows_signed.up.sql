-- The procedures' and the PQRs' list keys carry each record's whole logged
-- revision and its logged sign-off. A page walked the key's index, then
-- read each revision by its key and each sign-off by its key: three index
-- descents a row (about 300 buffers for 50 rows, against 49 for a raw page
-- of the record table), 0.22-0.49x of a raw page at 8 clients at 5,000
-- procedures and 10,000 PQRs. Now a page is one walk of the key, each entry
-- with its row, as the coupons list reads coupon_list.
--
-- A sign-off shows in the row once its own leaf is logged: the sequencer
-- rewrites the signed record's row in the transaction that gives the
-- sign-off its index (db/list_key.go, signedKeyRewrite), so the row stays a
-- function of the log a reader sees, and the recheck compares it with the
-- view as before.
CREATE OR REPLACE VIEW procedure_list_derived AS
SELECT p.site, p.id, p.revision, lg.leaf_index, p.voided, p.process, p.status,
    p.created_at, p.created_by, p.reason, p.code, p.title, p.filler_classification, p.wire_diameter_mm,
    p.shielding_gas, p.polarity, p.transfer_mode, p.positions, p.base_metal_group, p.thickness_min_mm,
    p.thickness_max_mm, p.min_penetration_mm, p.supporting_record_ids,
    so.id AS sign_off_id, so.statement AS sign_off_statement, so.signed_hash AS sign_off_hash,
    so.signed_hash_of AS sign_off_hash_of, so.signed_by AS sign_off_by, so.signer_role AS sign_off_role,
    so.signed_at AS sign_off_at
FROM procedures p
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.record_id = p.id AND l.kind = 'procedure' AND (l.site = p.site) IS TRUE
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = p.revision
-- The revision's sign-off, when its leaf is logged.
LEFT JOIN LATERAL (SELECT s.* FROM sign_offs s
              WHERE s.record_id = p.id AND s.record_revision = p.revision AND s.record_kind = 'procedure'
                AND (s.site = p.site) IS TRUE
                AND EXISTS (SELECT 1 FROM log_leaves sl
                            WHERE sl.record_id = s.id AND sl.kind = 'sign_off' AND (sl.site = s.site) IS TRUE)) so ON true;

ALTER TABLE procedure_list
    ADD COLUMN created_at timestamptz, ADD COLUMN created_by text, ADD COLUMN reason text,
    ADD COLUMN code text, ADD COLUMN title text, ADD COLUMN filler_classification text,
    ADD COLUMN wire_diameter_mm double precision, ADD COLUMN shielding_gas text, ADD COLUMN polarity text,
    ADD COLUMN transfer_mode text, ADD COLUMN positions text[], ADD COLUMN base_metal_group text,
    ADD COLUMN thickness_min_mm double precision, ADD COLUMN thickness_max_mm double precision,
    ADD COLUMN min_penetration_mm double precision, ADD COLUMN supporting_record_ids uuid[],
    ADD COLUMN sign_off_id uuid, ADD COLUMN sign_off_statement text, ADD COLUMN sign_off_hash bytea,
    ADD COLUMN sign_off_hash_of text, ADD COLUMN sign_off_by text, ADD COLUMN sign_off_role text,
    ADD COLUMN sign_off_at timestamptz;

CREATE OR REPLACE VIEW qualification_list_derived AS
SELECT q.site, q.id, q.revision, lg.leaf_index, q.voided, q.process, q.welder_id, q.outcome, q.welded_on,
    date_trunc('month', q.welded_on)::date AS welded_month,
    q.created_at, q.created_by, q.reason, q.record_number, q.filler_classification, q.wire_diameter_mm,
    q.shielding_gas, q.polarity, q.transfer_mode, q.position, q.base_metal_group, q.thickness_mm,
    q.current_a, q.voltage_v, q.travel_speed_mm_s, q.wire_feed_speed_m_min, q.ctwd_mm, q.preheat_c,
    q.interpass_c, q.visual_result, q.bend_result, q.tensile_result, q.macro_result, q.tensile_strength_mpa,
    q.remarks, q.min_penetration_mm,
    so.id AS sign_off_id, so.statement AS sign_off_statement, so.signed_hash AS sign_off_hash,
    so.signed_hash_of AS sign_off_hash_of, so.signed_by AS sign_off_by, so.signer_role AS sign_off_role,
    so.signed_at AS sign_off_at
FROM qualification_records q
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.record_id = q.id AND l.kind = 'qualification_record' AND (l.site = q.site) IS TRUE
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = q.revision
LEFT JOIN LATERAL (SELECT s.* FROM sign_offs s
              WHERE s.record_id = q.id AND s.record_revision = q.revision AND s.record_kind = 'qualification_record'
                AND (s.site = q.site) IS TRUE
                AND EXISTS (SELECT 1 FROM log_leaves sl
                            WHERE sl.record_id = s.id AND sl.kind = 'sign_off' AND (sl.site = s.site) IS TRUE)) so ON true;

ALTER TABLE qualification_list
    ADD COLUMN created_at timestamptz, ADD COLUMN created_by text, ADD COLUMN reason text,
    ADD COLUMN record_number text, ADD COLUMN filler_classification text,
    ADD COLUMN wire_diameter_mm double precision, ADD COLUMN shielding_gas text, ADD COLUMN polarity text,
    ADD COLUMN transfer_mode text, ADD COLUMN position text, ADD COLUMN base_metal_group text,
    ADD COLUMN thickness_mm double precision, ADD COLUMN current_a double precision,
    ADD COLUMN voltage_v double precision, ADD COLUMN travel_speed_mm_s double precision,
    ADD COLUMN wire_feed_speed_m_min double precision, ADD COLUMN ctwd_mm double precision,
    ADD COLUMN preheat_c double precision, ADD COLUMN interpass_c double precision,
    ADD COLUMN visual_result text, ADD COLUMN bend_result text, ADD COLUMN tensile_result text,
    ADD COLUMN macro_result text, ADD COLUMN tensile_strength_mpa double precision, ADD COLUMN remarks text,
    ADD COLUMN min_penetration_mm double precision,
    ADD COLUMN sign_off_id uuid, ADD COLUMN sign_off_statement text, ADD COLUMN sign_off_hash bytea,
    ADD COLUMN sign_off_hash_of text, ADD COLUMN sign_off_by text, ADD COLUMN sign_off_role text,
    ADD COLUMN sign_off_at timestamptz;

-- The rows written before this migration, written again whole.
DELETE FROM procedure_list;
INSERT INTO procedure_list SELECT * FROM procedure_list_derived;
DELETE FROM qualification_list;
INSERT INTO qualification_list SELECT * FROM qualification_list_derived;
