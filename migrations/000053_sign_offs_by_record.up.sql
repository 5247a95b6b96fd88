-- A sign-off is found by its id or by the record revision it signs, never
-- by its site alone, so no index of sign_offs leads with site: the key
-- becomes (id, site) and the one-sign-off-per-revision key (record_id,
-- record_revision, record_kind, site), which also serves the lookups of a
-- record's sign-offs that sign_offs_record served. With site leading, a page
-- of procedures or PQRs planned while the site's statistics were younger
-- than its rows read each revision's sign-off through the key's site prefix,
-- every sign-off of the site for every row of the page
-- (TestListPlansUnderYoungStatistics).
ALTER TABLE sign_offs DROP CONSTRAINT sign_offs_pkey,
    ADD CONSTRAINT sign_offs_pkey PRIMARY KEY (id, site);
ALTER TABLE sign_offs DROP CONSTRAINT sign_offs_site_record_kind_record_id_record_revision_key,
    ADD CONSTRAINT sign_offs_revision_key UNIQUE (record_id, record_revision, record_kind, site);
DROP INDEX sign_offs_record;
