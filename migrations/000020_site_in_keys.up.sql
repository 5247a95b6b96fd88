-- Every key of a site's data leads with site, the natural column to distribute
-- the tables by (one shard per site): primary keys, unique constraints and
-- foreign keys. Three tables hold data that every site reads and stay as they
-- are, to become reference tables (copied to every node) when distributed:
-- api_users (a token is looked up before its site is known), rule_sets (the
-- built-in sets at site '' serve every site, so a site's ranges may refer to a
-- set of another site) and schema_migrations.
-- production_records and production_batches are left to the migration that
-- partitions them by month (their keys must then also hold the month).
-- The uniqueness each key enforces does not change: ids are UUIDs drawn by
-- the service, and each old key's columns are a subset of the new one's only
-- by adding site, which a record never changes.

ALTER TABLE coupons DROP CONSTRAINT coupons_pkey,
    ADD CONSTRAINT coupons_pkey PRIMARY KEY (site, id, revision);
ALTER TABLE procedures DROP CONSTRAINT procedures_pkey,
    ADD CONSTRAINT procedures_pkey PRIMARY KEY (site, id, revision);
ALTER TABLE qualification_records DROP CONSTRAINT qualification_records_pkey,
    ADD CONSTRAINT qualification_records_pkey PRIMARY KEY (site, id, revision);
ALTER TABLE measurements DROP CONSTRAINT measurements_pkey,
    ADD CONSTRAINT measurements_pkey PRIMARY KEY (site, id, revision);

ALTER TABLE calibration_activations DROP CONSTRAINT calibration_activations_calibration_id_fkey;
ALTER TABLE calibrations DROP CONSTRAINT calibrations_pkey,
    ADD CONSTRAINT calibrations_pkey PRIMARY KEY (site, id);
ALTER TABLE calibration_activations DROP CONSTRAINT calibration_activations_pkey,
    ADD CONSTRAINT calibration_activations_pkey PRIMARY KEY (site, id),
    ADD CONSTRAINT calibration_activations_calibration_id_fkey
        FOREIGN KEY (site, calibration_id) REFERENCES calibrations (site, id);

ALTER TABLE procedure_ranges DROP CONSTRAINT procedure_ranges_id_key,
    ADD CONSTRAINT procedure_ranges_id_key UNIQUE (site, id);
ALTER TABLE sign_offs DROP CONSTRAINT sign_offs_pkey,
    ADD CONSTRAINT sign_offs_pkey PRIMARY KEY (site, id);
ALTER TABLE log_pending DROP CONSTRAINT log_pending_pkey,
    ADD CONSTRAINT log_pending_pkey PRIMARY KEY (site, seq);
ALTER TABLE log_rejected DROP CONSTRAINT log_rejected_pkey,
    ADD CONSTRAINT log_rejected_pkey PRIMARY KEY (site, seq);

DROP INDEX current_marks_record;
CREATE UNIQUE INDEX current_marks_record ON current_marks (site, kind, record_id);

-- The new primary key of log_pending is this index.
DROP INDEX log_pending_site;
