DROP TABLE coupon_plan_marks;
DROP TABLE coupon_plans;
-- Drift flags are derived: dropping them loses nothing a recompute cannot give back.
DELETE FROM flags WHERE kind = 'drift';
DROP INDEX flags_drift_group;
ALTER TABLE flags DROP CONSTRAINT flags_drift_group_check;
ALTER TABLE flags DROP COLUMN drift_group;
ALTER TABLE flags DROP CONSTRAINT flags_kind_check;
ALTER TABLE flags ADD CONSTRAINT flags_kind_check
    CHECK (kind IN ('range', 'not_checkable', 'model', 'requirement', 'suspect_units'));
