DROP TABLE IF EXISTS qualification_list;
DROP VIEW IF EXISTS qualification_list_derived;
