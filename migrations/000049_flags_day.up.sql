-- The flags list's short time ranges walk each UTC day of the range in the
-- list's order (subject, variable, kind), a page each: without it a week's
-- page read and sorted every flag of the week.
CREATE INDEX flags_day ON flags (site, ((subject_at AT TIME ZONE 'UTC')::date), subject_id, variable, kind);
