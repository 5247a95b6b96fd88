CREATE INDEX sign_offs_record ON sign_offs (record_id, record_revision);
ALTER TABLE sign_offs DROP CONSTRAINT sign_offs_revision_key,
    ADD CONSTRAINT sign_offs_site_record_kind_record_id_record_revision_key UNIQUE (site, record_kind, record_id, record_revision);
ALTER TABLE sign_offs DROP CONSTRAINT sign_offs_pkey,
    ADD CONSTRAINT sign_offs_pkey PRIMARY KEY (site, id);
