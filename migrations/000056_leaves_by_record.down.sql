ALTER TABLE log_leaves DROP CONSTRAINT log_leaves_record_key;
ALTER TABLE log_leaves ADD CONSTRAINT log_leaves_site_kind_record_id_revision_key UNIQUE (site, kind, record_id, revision);
CREATE INDEX log_leaves_pending_seq ON log_leaves (site, pending_seq);

CREATE OR REPLACE VIEW coupon_list_derived AS
SELECT c.site,
    c.id,
    c.revision,
    c.created_at,
    c.created_by,
    c.reason,
    c.voided,
    c.procedure_id,
    c.qualification_record_id,
    c.coupon_mark,
    c.welder_id,
    c.power_source_id,
    c.filler_lot,
    c.welded_on,
    c.joint_type,
    c.thickness_mm,
    c.pass_number,
    c.current_a,
    c.voltage_v,
    c.travel_speed_mm_s,
    c.wire_feed_speed_m_min,
    c.ctwd_mm,
    c.wire_diameter_mm,
    c.shielding_gas,
    c.polarity,
    c."position",
    c.preheat_c,
    c.interpass_c,
    lg.leaf_index,
    (date_trunc('month'::text, (c.welded_on)::timestamp with time zone))::date AS welded_month,
    ( SELECT
                CASE
                    WHEN (count(*) = 0) THEN ''::text
                    WHEN bool_or((cm.acceptance = 'reject'::text)) THEN 'reject'::text
                    ELSE 'accept'::text
                END AS "case"
           FROM (( SELECT DISTINCT h_1.id
                   FROM measurements h_1
                  WHERE (h_1.coupon_id = c.id)) h
             CROSS JOIN LATERAL ( SELECT m.coupon_id,
                    m.voided,
                    m.acceptance
                   FROM (log_leaves ml
                     JOIN measurements m ON (((m.site = ml.site) AND (m.id = ml.record_id) AND (m.revision = ml.revision))))
                  WHERE ((ml.site = c.site) AND (ml.record_id = h.id) AND (ml.kind = 'measurement'::text))
                  ORDER BY ml.revision DESC
                 LIMIT 1) cm)
          WHERE ((cm.coupon_id = c.id) AND (NOT cm.voided))) AS verdict
   FROM (coupons c
     JOIN LATERAL ( SELECT l.leaf_index,
            l.revision
           FROM log_leaves l
          WHERE ((l.site = c.site) AND (l.record_id = c.id) AND (l.kind = 'coupon'::text))
          ORDER BY l.revision DESC
         LIMIT 1) lg ON ((lg.revision = c.revision)));

CREATE OR REPLACE VIEW section_list_derived AS
SELECT m.site,
    m.id,
    m.revision,
    lg.leaf_index,
    m.coupon_id,
    m.acceptance,
    m.voided
   FROM (measurements m
     JOIN LATERAL ( SELECT l.leaf_index,
            l.revision
           FROM log_leaves l
          WHERE ((l.site = m.site) AND (l.record_id = m.id) AND (l.kind = 'measurement'::text))
          ORDER BY l.revision DESC
         LIMIT 1) lg ON ((lg.revision = m.revision)));

CREATE OR REPLACE VIEW production_list_derived AS
SELECT r.site,
    r.id,
    r.batch_id,
    r.procedure_id,
    r.weld_id,
    r.welder_id,
    r.recorded_at,
    r.current_a,
    r.voltage_v,
    r.travel_speed_mm_s,
    r.wire_feed_speed_m_min,
    r.ctwd_mm,
    r.created_at,
    r.created_by,
    lg.leaf_index,
    ((r.recorded_at AT TIME ZONE 'UTC'::text))::date AS recorded_day,
    (date_trunc('month'::text, (r.recorded_at AT TIME ZONE 'UTC'::text)))::date AS recorded_month
   FROM (production_records r
     JOIN log_leaves lg ON (((lg.site = r.site) AND (lg.record_id = r.id) AND (lg.kind = 'production_record'::text))));

CREATE OR REPLACE VIEW sign_off_list_derived AS
SELECT s.site,
    s.id,
    lg.leaf_index,
    s.record_kind,
    s.record_id,
    s.signed_by
   FROM (sign_offs s
     JOIN log_leaves lg ON (((lg.site = s.site) AND (lg.record_id = s.id) AND (lg.kind = 'sign_off'::text))));

CREATE OR REPLACE VIEW qualification_list_derived AS
SELECT q.site,
    q.id,
    q.revision,
    lg.leaf_index,
    q.voided,
    q.process,
    q.welder_id,
    q.outcome,
    q.welded_on,
    (date_trunc('month'::text, (q.welded_on)::timestamp with time zone))::date AS welded_month
   FROM (qualification_records q
     JOIN LATERAL ( SELECT l.leaf_index,
            l.revision
           FROM log_leaves l
          WHERE ((l.site = q.site) AND (l.record_id = q.id) AND (l.kind = 'qualification_record'::text))
          ORDER BY l.revision DESC
         LIMIT 1) lg ON ((lg.revision = q.revision)));

CREATE OR REPLACE VIEW procedure_list_derived AS
SELECT p.site,
    p.id,
    p.revision,
    lg.leaf_index,
    p.voided,
    p.process,
    p.status
   FROM (procedures p
     JOIN LATERAL ( SELECT l.leaf_index,
            l.revision
           FROM log_leaves l
          WHERE ((l.site = p.site) AND (l.record_id = p.id) AND (l.kind = 'procedure'::text))
          ORDER BY l.revision DESC
         LIMIT 1) lg ON ((lg.revision = p.revision)));
