-- etchlog_refuse fails the statement that calls it with SQLSTATE code and
-- reason: a write whose condition is checked in its own statement (the
-- token's user, the procedure's count of judgement changes) then aborts its
-- transaction there, so its COMMIT may leave in the same round trip.
CREATE FUNCTION etchlog_refuse(code text, reason text) RETURNS bigint
LANGUAGE plpgsql VOLATILE AS $$
BEGIN
    RAISE EXCEPTION USING ERRCODE = code, MESSAGE = reason;
END $$;
REVOKE ALL ON FUNCTION etchlog_refuse(text, text) FROM PUBLIC;
GRANT EXECUTE ON FUNCTION etchlog_refuse(text, text) TO etchlog_app;
