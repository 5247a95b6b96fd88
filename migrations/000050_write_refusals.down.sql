DROP FUNCTION IF EXISTS etchlog_refuse(text, text);
