DROP FUNCTION IF EXISTS etchlog_analyze(regclass);
