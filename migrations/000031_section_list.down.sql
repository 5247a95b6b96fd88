DROP TABLE IF EXISTS section_list;
DROP VIEW IF EXISTS section_list_derived;
