DROP TABLE lab_sign_outs;
DROP TABLE lab_sessions;
