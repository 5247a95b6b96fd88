-- Indexes no statement reads any more. The lists read their keys
-- (coupon_list, qualification_list, production_list) and every mark or record
-- number lookup reads current_marks, so these only cost every write of a
-- coupon, a PQR or a production record another index entry:
--   coupons_mark, coupons_welded_on, coupons_welder (the coupons list's old
--     filters; coupon_list_mark, _day, _welder serve them);
--   qualification_records_number, _welded_on, _welder (likewise
--     current_marks and qualification_list);
--   production_records_welder, _recorded_at, _weld (production_list, and
--     production_welds for a weld's records);
--   measurements_rejected (the old filter of coupons with a rejected
--     section; section_list_acceptance and coupon_list_verdict serve it);
--   measurements_coupon (coupon_id), a prefix of measurements_coupon_current
--     (coupon_id, id, revision DESC), which serves every lookup by coupon.
-- The indexes kept on these tables are their keys, the site-wide latest
-- revision walk (site, id, revision DESC), a coupon's sections, and the
-- lookups by procedure and PQR that flag recomputation makes
-- (TestRecordIndexesHaveReaders names each one's reader). The benchmarks'
-- raw SELECT baselines build the list indexes a plain table would have.
DROP INDEX coupons_mark, coupons_welded_on, coupons_welder;
DROP INDEX qualification_records_number, qualification_records_welded_on, qualification_records_welder;
DROP INDEX production_records_welder, production_records_recorded_at, production_records_weld;
DROP INDEX measurements_coupon, measurements_rejected;
