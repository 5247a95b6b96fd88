-- A calibration keeps what it selected, not every sample: the selection as
-- applied (selection: group, welding days, procedure, arc length, model, the
-- moment it was read and the version of the selection query), how many
-- coupons were fitted (sample_count) and a SHA-256 over their ids and the
-- revisions read (sample_digest, defined in the README next to the log's
-- encodings). A group of a million coupons no longer writes a row the size of
-- its id list. samples and coupon_ids stay for the calibrations stored before
-- and are left null by new ones; a row has one form or the other.

ALTER TABLE calibrations
    ALTER COLUMN samples DROP NOT NULL,
    ALTER COLUMN coupon_ids DROP NOT NULL,
    ADD COLUMN selection     jsonb,
    ADD COLUMN sample_count  integer CHECK (sample_count >= 2),
    ADD COLUMN sample_digest bytea CHECK (octet_length(sample_digest) = 32),
    ADD CONSTRAINT calibrations_inline_or_selection CHECK (
        (samples IS NOT NULL AND coupon_ids IS NOT NULL
         AND selection IS NULL AND sample_count IS NULL AND sample_digest IS NULL)
        OR (samples IS NULL AND coupon_ids IS NULL
         AND selection IS NOT NULL AND sample_count IS NOT NULL AND sample_digest IS NOT NULL));
