-- Back to keys without site (the keys before 000020).
CREATE INDEX log_pending_site ON log_pending (site, seq);
DROP INDEX current_marks_record;
CREATE UNIQUE INDEX current_marks_record ON current_marks (kind, record_id);

ALTER TABLE log_rejected DROP CONSTRAINT log_rejected_pkey,
    ADD CONSTRAINT log_rejected_pkey PRIMARY KEY (seq);
ALTER TABLE log_pending DROP CONSTRAINT log_pending_pkey,
    ADD CONSTRAINT log_pending_pkey PRIMARY KEY (seq);
ALTER TABLE sign_offs DROP CONSTRAINT sign_offs_pkey,
    ADD CONSTRAINT sign_offs_pkey PRIMARY KEY (id);
ALTER TABLE procedure_ranges DROP CONSTRAINT procedure_ranges_id_key,
    ADD CONSTRAINT procedure_ranges_id_key UNIQUE (id);

ALTER TABLE calibration_activations DROP CONSTRAINT calibration_activations_calibration_id_fkey;
ALTER TABLE calibration_activations DROP CONSTRAINT calibration_activations_pkey,
    ADD CONSTRAINT calibration_activations_pkey PRIMARY KEY (id);
ALTER TABLE calibrations DROP CONSTRAINT calibrations_pkey,
    ADD CONSTRAINT calibrations_pkey PRIMARY KEY (id);
ALTER TABLE calibration_activations ADD CONSTRAINT calibration_activations_calibration_id_fkey
    FOREIGN KEY (calibration_id) REFERENCES calibrations (id);

ALTER TABLE measurements DROP CONSTRAINT measurements_pkey,
    ADD CONSTRAINT measurements_pkey PRIMARY KEY (id, revision);
ALTER TABLE qualification_records DROP CONSTRAINT qualification_records_pkey,
    ADD CONSTRAINT qualification_records_pkey PRIMARY KEY (id, revision);
ALTER TABLE procedures DROP CONSTRAINT procedures_pkey,
    ADD CONSTRAINT procedures_pkey PRIMARY KEY (id, revision);
ALTER TABLE coupons DROP CONSTRAINT coupons_pkey,
    ADD CONSTRAINT coupons_pkey PRIMARY KEY (id, revision);
