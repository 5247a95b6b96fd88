-- The coupons list's key, kept beside the columns the list filters on.
-- Lists page in log order; the log index lives in log_leaves, the filtered
-- columns in coupons, so a filtered page used to walk the site's leaves in
-- order and look each coupon up. coupon_list holds one row per logged
-- coupon: its latest logged revision as stored (every column), that
-- revision's log index, its welding month, and the verdict of its current
-- logged sections ('' none, 'accept' measured with no rejected section,
-- 'reject' at least one). A page reads this table alone.
-- The log sequencer rewrites a coupon's row in the transaction that gives
-- the coupon's (or one of its sections') leaf its index, from
-- coupon_list_derived; the table is derived from records and log and
-- Store.RecheckCouponList compares it with the view.
CREATE VIEW coupon_list_derived AS
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
-- c is the revision of the coupon's latest leaf: reached from the coupon
-- (a condition on c.id selects by key, as the sequencer's rewrite does).
JOIN LATERAL (SELECT l.leaf_index, l.revision FROM log_leaves l
              WHERE l.site = c.site AND l.record_id = c.id AND l.kind = 'coupon'
              ORDER BY l.revision DESC LIMIT 1) lg ON lg.revision = c.revision;

-- The table has the view's columns: the coupon revision as stored (a page
-- reads nothing else), then the list keys.
CREATE TABLE coupon_list AS SELECT * FROM coupon_list_derived WITH NO DATA;
ALTER TABLE coupon_list ADD PRIMARY KEY (site, id),
    ALTER COLUMN leaf_index SET NOT NULL,
    ALTER COLUMN welded_month SET NOT NULL,
    ALTER COLUMN verdict SET NOT NULL,
    ADD CONSTRAINT coupon_list_verdict_check CHECK (verdict IN ('', 'accept', 'reject'));

-- Coupons logged before this migration (filled before the indexes exist:
-- one sort per index instead of a million insertions into each).
INSERT INTO coupon_list SELECT * FROM coupon_list_derived;

-- Each equality filter pages through its own index in log order; a
-- welding-day range without one walks each month (and verdict) of the
-- range in log order and merges the heads (db/coupon_list.go).
CREATE INDEX coupon_list_log ON coupon_list (site, leaf_index);
CREATE INDEX coupon_list_procedure ON coupon_list (site, procedure_id, leaf_index);
CREATE INDEX coupon_list_qualification_record ON coupon_list (site, qualification_record_id, leaf_index);
CREATE INDEX coupon_list_welder ON coupon_list (site, welder_id, leaf_index);
CREATE INDEX coupon_list_mark ON coupon_list (site, coupon_mark, leaf_index);
CREATE INDEX coupon_list_verdict ON coupon_list (site, verdict, leaf_index);
CREATE INDEX coupon_list_month ON coupon_list (site, welded_month, verdict, leaf_index) INCLUDE (welded_on, voided, id);
-- Derived: the sequencer deletes a coupon's row and writes it again.
GRANT DELETE ON coupon_list TO etchlog_app;

