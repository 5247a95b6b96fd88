-- Going back requires every coupon to state its wire diameter and polarity.
-- Records are append-only, so a coupon that left them out cannot be filled
-- in here: refuse, naming how many, rather than invent values.
DO $$
DECLARE
    n bigint;
BEGIN
    SELECT count(*) INTO n FROM coupons WHERE wire_diameter_mm IS NULL OR polarity IS NULL;
    IF n > 0 THEN
        RAISE EXCEPTION 'etchlog: % coupon revision(s) leave out wire_diameter_mm or polarity (inherited from their procedure); cannot restore NOT NULL', n;
    END IF;
END
$$;
ALTER TABLE coupons ALTER COLUMN wire_diameter_mm SET NOT NULL;
ALTER TABLE coupons ALTER COLUMN polarity SET NOT NULL;
