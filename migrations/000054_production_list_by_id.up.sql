-- production_list's key leads with the record id: a page's lookup of its
-- rows by id then has one index that names the id first, instead of six that
-- lead with site, whose site prefix a plan made under statistics younger
-- than the site took for a lookup (TestListPlansUnderYoungStatistics).
ALTER TABLE production_list DROP CONSTRAINT production_list_pkey,
    ADD CONSTRAINT production_list_pkey PRIMARY KEY (id, site);
