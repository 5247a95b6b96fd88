-- etchlog_analyze(t) runs ANALYZE on one of etchlog's own tables, as their
-- owner: the service's login may refresh the statistics of the tables it
-- writes when the server does not (autovacuum off), and nothing else.
-- Store.KeepStatistics calls it for each table that changed by more than
-- autovacuum's default analyze threshold since its last analysis.
CREATE FUNCTION etchlog_analyze(t regclass) RETURNS void
LANGUAGE plpgsql VOLATILE SECURITY DEFINER SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    IF NOT EXISTS (SELECT 1 FROM pg_class c WHERE c.oid = t AND c.relkind IN ('r', 'p')
                   AND c.relowner = (SELECT oid FROM pg_roles WHERE rolname = current_user)) THEN
        RAISE EXCEPTION USING ERRCODE = '42501', MESSAGE = format('%s is not a table of etchlog''s owner', t);
    END IF;
    EXECUTE format('ANALYZE %s', t);
END $$;
REVOKE ALL ON FUNCTION etchlog_analyze(regclass) FROM PUBLIC;
GRANT EXECUTE ON FUNCTION etchlog_analyze(regclass) TO etchlog_app;
