-- Indexes for the list filters. Lists page in log order (log_leaves.leaf_index,
-- which the record tables do not hold), so a selective filter is served by
-- finding the matching records through one of these indexes and joining
-- their leaves (log_leaves_record); the filters that keep most records
-- (process, status, outcome, acceptance, voided) walk the log in order
-- (log_leaves_kind) instead. Each index leads with site, the key every list
-- is bound to; a date or time second key serves a filter combined with a
-- welding-day or recording-time range.
CREATE INDEX coupons_procedure ON coupons (site, procedure_id, welded_on);
CREATE INDEX coupons_qualification_record ON coupons (site, qualification_record_id, welded_on);
CREATE INDEX coupons_welder ON coupons (site, welder_id, welded_on);
CREATE INDEX coupons_welded_on ON coupons (site, welded_on);

CREATE INDEX qualification_records_welder ON qualification_records (site, welder_id, welded_on);
CREATE INDEX qualification_records_welded_on ON qualification_records (site, welded_on);

CREATE INDEX production_records_welder ON production_records (site, welder_id, recorded_at);
CREATE INDEX production_records_recorded_at ON production_records (site, recorded_at);
CREATE INDEX production_records_weld ON production_records (site, weld_id);

-- Rejected sections are few: the coupons list's acceptance=reject filter
-- starts from them.
CREATE INDEX measurements_rejected ON measurements (coupon_id) WHERE acceptance = 'reject';
