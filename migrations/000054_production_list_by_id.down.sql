ALTER TABLE production_list DROP CONSTRAINT production_list_pkey,
    ADD CONSTRAINT production_list_pkey PRIMARY KEY (site, id);
