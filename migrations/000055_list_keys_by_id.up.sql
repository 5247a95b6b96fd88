-- Every list key's primary key leads with the record id, as
-- production_list's does since 000054. The sequencer finds a key's rows by
-- id to delete them (and a coupon range's page finds its rows by id); with
-- (site, id) the planner could instead take the site prefix of any of the
-- table's other indexes, and under statistics that know every site but a
-- new one (a group of a few shops, one of them importing its history) it
-- did: 1,201,000 rows read to delete 800 coupons' rows at a site of 3,000,
-- 5,400,600 for their sections (TestSequencerRewriteReadsByKey, "analysed
-- with one other site"). The lookups now name the id alone as the index's
-- condition and check the site as a filter.
ALTER TABLE coupon_list DROP CONSTRAINT coupon_list_pkey, ADD CONSTRAINT coupon_list_pkey PRIMARY KEY (id, site);
ALTER TABLE section_list DROP CONSTRAINT section_list_pkey, ADD CONSTRAINT section_list_pkey PRIMARY KEY (id, site);
ALTER TABLE sign_off_list DROP CONSTRAINT sign_off_list_pkey, ADD CONSTRAINT sign_off_list_pkey PRIMARY KEY (id, site);
ALTER TABLE qualification_list DROP CONSTRAINT qualification_list_pkey, ADD CONSTRAINT qualification_list_pkey PRIMARY KEY (id, site);
ALTER TABLE procedure_list DROP CONSTRAINT procedure_list_pkey, ADD CONSTRAINT procedure_list_pkey PRIMARY KEY (id, site);
