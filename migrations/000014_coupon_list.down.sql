DROP TABLE IF EXISTS coupon_list;
DROP VIEW IF EXISTS coupon_list_derived;
