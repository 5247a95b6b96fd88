CREATE INDEX production_list_weld ON production_list (site, weld_id, leaf_index) INCLUDE (id, recorded_at);
ALTER TABLE production_welds DROP CONSTRAINT production_welds_pkey,
    ADD CONSTRAINT production_welds_pkey PRIMARY KEY (site, procedure_id, weld_id);
