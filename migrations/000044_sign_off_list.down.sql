DROP TABLE IF EXISTS sign_off_list;
DROP VIEW IF EXISTS sign_off_list_derived;
