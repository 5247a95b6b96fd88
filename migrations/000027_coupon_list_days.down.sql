DROP INDEX coupon_list_day;
