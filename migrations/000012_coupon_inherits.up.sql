-- A coupon may leave out its wire diameter and polarity: it was welded with
-- its procedure's (else its qualification record's). The row keeps exactly
-- what was written (NULL when left out); reads show the inherited value.
-- The range CHECKs stay: a value that is given must still be plausible.
ALTER TABLE coupons ALTER COLUMN wire_diameter_mm DROP NOT NULL;
ALTER TABLE coupons ALTER COLUMN polarity DROP NOT NULL;
