-- Audit events already written for calibrations stay in the chain (it is
-- append-only); NOT VALID keeps them while refusing new 'activate' events.
ALTER TABLE audit_events DROP CONSTRAINT audit_events_action_check;
ALTER TABLE audit_events ADD CONSTRAINT audit_events_action_check
    CHECK (action IN ('create', 'correct', 'void')) NOT VALID;
DROP INDEX IF EXISTS measurements_coupon_current;
DROP TABLE IF EXISTS calibration_activations;
DROP TABLE IF EXISTS calibrations;
