-- Back to inline samples only: fails while a calibration stored by its
-- selection exists (its samples and coupon ids were never written).
ALTER TABLE calibrations
    DROP CONSTRAINT calibrations_inline_or_selection,
    DROP COLUMN sample_digest,
    DROP COLUMN sample_count,
    DROP COLUMN selection,
    ALTER COLUMN coupon_ids SET NOT NULL,
    ALTER COLUMN samples SET NOT NULL;
