-- flags: one more kind, "drift". A calibration group's new coupons (those its
-- active calibration was not fitted to), or those of one power source, welder
-- or wire lot, whose residuals against that calibration have moved (two-sided
-- tabular CUSUM). A drift flag is about a run of coupons: its subject is the
-- coupon where the shift is estimated to have begun, and drift_group names the
-- model family and calibration group whose chart raised it, so a recompute of
-- that chart rewrites exactly its flags. Derived data like every flag.
ALTER TABLE flags DROP CONSTRAINT flags_kind_check;
ALTER TABLE flags ADD CONSTRAINT flags_kind_check
    CHECK (kind IN ('range', 'not_checkable', 'model', 'requirement', 'suspect_units', 'drift'));
ALTER TABLE flags ADD COLUMN drift_group text;
ALTER TABLE flags ADD CONSTRAINT flags_drift_group_check
    CHECK ((kind = 'drift') = (drift_group IS NOT NULL) AND length(drift_group) <= 300);
CREATE INDEX flags_drift_group ON flags (site, drift_group) WHERE kind = 'drift';
