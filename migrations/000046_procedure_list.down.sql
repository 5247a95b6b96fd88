DROP TABLE IF EXISTS procedure_list;
DROP VIEW IF EXISTS procedure_list_derived;
