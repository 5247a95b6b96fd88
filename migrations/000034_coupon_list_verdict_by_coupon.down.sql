CREATE OR REPLACE VIEW coupon_list_derived AS
SELECT c.*, lg.leaf_index, date_trunc('month', c.welded_on)::date AS welded_month,
       (   SELECT CASE WHEN count(*) = 0 THEN '' WHEN bool_or(cm.acceptance = 'reject') THEN 'reject' ELSE 'accept' END
           FROM (SELECT DISTINCT h.id FROM measurements h WHERE h.coupon_id = c.id AND h.site = c.site) h
           CROSS JOIN LATERAL (
               SELECT m.coupon_id, m.voided, m.acceptance
               FROM log_leaves ml JOIN measurements m ON m.site = ml.site AND m.id = ml.record_id AND m.revision = ml.revision
               WHERE ml.site = c.site AND ml.record_id = h.id AND ml.kind = 'measurement'
               ORDER BY ml.revision DESC LIMIT 1) cm
           WHERE cm.coupon_id = c.id AND NOT cm.voided) AS verdict
FROM coupons c
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.site = c.site AND l.record_id = c.id AND l.kind = 'coupon'
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = c.revision;
