-- The coupons list filtered by a short welding-day range alone walks each
-- day of the range in log order (db/coupon_list.go) and merges the heads: at
-- most days × one page of index entries, none of them outside the range.
-- The index carries what the walk filters on, so it reads no table row
-- but the page's own.
CREATE INDEX coupon_list_day ON coupon_list (site, welded_on, leaf_index) INCLUDE (voided, verdict, id);
