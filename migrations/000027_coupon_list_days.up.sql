-- The coupons list filtered by welding days alone walks each day of a
-- short range, and of the partial months at the ends of a longer one, in
-- log order (db/coupon_list.go) and merges the heads with those of the whole
-- months between (coupon_list_month): no entry outside the range is read.
-- The index carries what the walk filters on, so it reads no table row
-- but the page's own.
CREATE INDEX coupon_list_day ON coupon_list (site, welded_on, leaf_index) INCLUDE (voided, verdict, id);
