ALTER TABLE audit_events DROP CONSTRAINT audit_events_action_check;
ALTER TABLE audit_events ADD CONSTRAINT audit_events_action_check
    CHECK (action IN ('create', 'correct', 'void', 'activate'));
DROP INDEX calibration_activations_family_latest;
ALTER TABLE calibration_activations DROP COLUMN family;
ALTER TABLE calibration_activations DROP COLUMN action;
DROP TRIGGER measurements_section_unique ON measurements;
DROP FUNCTION etchlog_section_unique();
ALTER TABLE qualification_records DROP COLUMN min_penetration_mm;
ALTER TABLE flags DROP CONSTRAINT flags_kind_check;
ALTER TABLE flags ADD CONSTRAINT flags_kind_check CHECK (kind IN ('range', 'not_checkable', 'model'));
