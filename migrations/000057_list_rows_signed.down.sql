DROP VIEW procedure_list_derived;
CREATE VIEW procedure_list_derived AS
SELECT p.site, p.id, p.revision, lg.leaf_index, p.voided, p.process, p.status
FROM procedures p
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.record_id = p.id AND l.kind = 'procedure' AND (l.site = p.site) IS TRUE
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = p.revision;
ALTER TABLE procedure_list
    DROP COLUMN created_at, DROP COLUMN created_by, DROP COLUMN reason, DROP COLUMN code, DROP COLUMN title,
    DROP COLUMN filler_classification, DROP COLUMN wire_diameter_mm, DROP COLUMN shielding_gas,
    DROP COLUMN polarity, DROP COLUMN transfer_mode, DROP COLUMN positions, DROP COLUMN base_metal_group,
    DROP COLUMN thickness_min_mm, DROP COLUMN thickness_max_mm, DROP COLUMN min_penetration_mm,
    DROP COLUMN supporting_record_ids, DROP COLUMN sign_off_id, DROP COLUMN sign_off_statement,
    DROP COLUMN sign_off_hash, DROP COLUMN sign_off_hash_of, DROP COLUMN sign_off_by, DROP COLUMN sign_off_role,
    DROP COLUMN sign_off_at;

DROP VIEW qualification_list_derived;
CREATE VIEW qualification_list_derived AS
SELECT q.site, q.id, q.revision, lg.leaf_index, q.voided, q.process, q.welder_id, q.outcome, q.welded_on,
    date_trunc('month', q.welded_on)::date AS welded_month
FROM qualification_records q
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.record_id = q.id AND l.kind = 'qualification_record' AND (l.site = q.site) IS TRUE
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = q.revision;
ALTER TABLE qualification_list
    DROP COLUMN created_at, DROP COLUMN created_by, DROP COLUMN reason, DROP COLUMN record_number,
    DROP COLUMN filler_classification, DROP COLUMN wire_diameter_mm, DROP COLUMN shielding_gas,
    DROP COLUMN polarity, DROP COLUMN transfer_mode, DROP COLUMN position, DROP COLUMN base_metal_group,
    DROP COLUMN thickness_mm, DROP COLUMN current_a, DROP COLUMN voltage_v, DROP COLUMN travel_speed_mm_s,
    DROP COLUMN wire_feed_speed_m_min, DROP COLUMN ctwd_mm, DROP COLUMN preheat_c, DROP COLUMN interpass_c,
    DROP COLUMN visual_result, DROP COLUMN bend_result, DROP COLUMN tensile_result, DROP COLUMN macro_result,
    DROP COLUMN tensile_strength_mpa, DROP COLUMN remarks, DROP COLUMN min_penetration_mm,
    DROP COLUMN sign_off_id, DROP COLUMN sign_off_statement, DROP COLUMN sign_off_hash,
    DROP COLUMN sign_off_hash_of, DROP COLUMN sign_off_by, DROP COLUMN sign_off_role, DROP COLUMN sign_off_at;
