-- coupon_list_derived reads a coupon's sections for its verdict by
-- coupon_id alone (measurements_coupon_current, a handful of rows); the
-- site is still checked, on each section's logged revision (ml.site =
-- c.site, and that revision must name the coupon). Filtering the sections
-- by site in the same scan let the planner pick a bitmap AND with the
-- site's index while the table's statistics were young, reading every
-- section of the site for each coupon the sequencer rewrote: a large
-- import was logged at about 160 leaves a second, slowing as the site grew.
-- The rows the view yields are unchanged: a section of another site naming
-- the same coupon id finds no leaf of this site, or one of a section that
-- does not name this coupon.
CREATE OR REPLACE VIEW coupon_list_derived AS
SELECT c.*, lg.leaf_index, date_trunc('month', c.welded_on)::date AS welded_month,
       (   SELECT CASE WHEN count(*) = 0 THEN '' WHEN bool_or(cm.acceptance = 'reject') THEN 'reject' ELSE 'accept' END
           FROM (SELECT DISTINCT h.id FROM measurements h WHERE h.coupon_id = c.id) h
           CROSS JOIN LATERAL (
               SELECT m.coupon_id, m.voided, m.acceptance
               FROM log_leaves ml JOIN measurements m ON m.site = ml.site AND m.id = ml.record_id AND m.revision = ml.revision
               WHERE ml.site = c.site AND ml.record_id = h.id AND ml.kind = 'measurement'
               ORDER BY ml.revision DESC LIMIT 1) cm
           WHERE cm.coupon_id = c.id AND NOT cm.voided) AS verdict
FROM coupons c
-- c is the revision of the coupon's latest leaf: reached from the coupon
-- (a condition on c.id selects by key, as the sequencer's rewrite does).
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.site = c.site AND l.record_id = c.id AND l.kind = 'coupon'
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = c.revision;
