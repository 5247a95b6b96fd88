DROP INDEX current_marks_record;
CREATE UNIQUE INDEX current_marks_record ON current_marks (site, kind, record_id);
