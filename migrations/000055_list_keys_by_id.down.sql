ALTER TABLE procedure_list DROP CONSTRAINT procedure_list_pkey, ADD CONSTRAINT procedure_list_pkey PRIMARY KEY (site, id);
ALTER TABLE qualification_list DROP CONSTRAINT qualification_list_pkey, ADD CONSTRAINT qualification_list_pkey PRIMARY KEY (site, id);
ALTER TABLE sign_off_list DROP CONSTRAINT sign_off_list_pkey, ADD CONSTRAINT sign_off_list_pkey PRIMARY KEY (site, id);
ALTER TABLE section_list DROP CONSTRAINT section_list_pkey, ADD CONSTRAINT section_list_pkey PRIMARY KEY (site, id);
ALTER TABLE coupon_list DROP CONSTRAINT coupon_list_pkey, ADD CONSTRAINT coupon_list_pkey PRIMARY KEY (site, id);
