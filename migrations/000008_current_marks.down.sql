DROP INDEX IF EXISTS qualification_records_number;
DROP INDEX IF EXISTS coupons_mark;
-- The old rule holds only where no mark was reused; otherwise it cannot come back.
DO $$
BEGIN
    IF NOT EXISTS (SELECT 1 FROM coupons WHERE revision = 1 GROUP BY site, coupon_mark HAVING count(*) > 1) THEN
        CREATE UNIQUE INDEX coupons_mark_key ON coupons (site, coupon_mark) WHERE revision = 1;
    END IF;
    IF NOT EXISTS (SELECT 1 FROM qualification_records WHERE revision = 1 GROUP BY site, record_number HAVING count(*) > 1) THEN
        CREATE UNIQUE INDEX qualification_records_number_key ON qualification_records (site, record_number) WHERE revision = 1;
    END IF;
END $$;
DROP TABLE IF EXISTS current_marks;
