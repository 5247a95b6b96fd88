DROP TRIGGER calibration_activations_judgement ON calibration_activations;
DROP TRIGGER qualification_records_judgement ON qualification_records;
DROP TRIGGER procedure_ranges_judgement ON procedure_ranges;
DROP TRIGGER procedures_judgement ON procedures;
DROP FUNCTION etchlog_activation_changed();
DROP FUNCTION etchlog_support_changed();
DROP FUNCTION etchlog_ranges_changed();
DROP FUNCTION etchlog_procedure_changed();
DROP TABLE judgement_changes;
