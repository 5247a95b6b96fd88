-- A record's current mark is found by its record id: the unique index over
-- (site, kind, record_id) becomes (record_id, kind, site). Leading with
-- (site, kind) it offered the planner a second way into a site's marks
-- beside the key (site, kind, mark); while a site's statistics were younger
-- than its marks (an import filling a new site), the planner took it for a
-- lookup of a few hundred marks and filtered every mark of the site (an
-- import part's read of its stored marks grew with the site: 30 ms a part on
-- average, 90 ms at worst, by 333,334 marks). Now only the key serves a
-- lookup by mark (TestMarkLookupsReadByKey), and the record index still
-- serves the lookups by record, which give record_id.
DROP INDEX current_marks_record;
CREATE UNIQUE INDEX current_marks_record ON current_marks (record_id, kind, site);
