-- Marks stay unique among current records. current_marks holds the mark of
-- the current revision of every coupon (coupon_mark) and qualification
-- record (record_number), voided ones included; its primary key is the
-- uniqueness rule. It is derived from the records and kept in step in the
-- writing transaction: a create claims the mark, a correction that changes
-- it releases the old one and claims the new. A void keeps its mark (the
-- voided record still answers to it); a mark released by a correction may
-- be claimed again.
-- Two transactions racing for one mark meet on the primary key: one wins.
-- The old rule (unique among revision 1 rows) kept a corrected mark reserved
-- for ever while letting a correction duplicate another record's mark.

CREATE TABLE current_marks (
    site      text NOT NULL,
    kind      text NOT NULL CHECK (kind IN ('coupon_mark', 'record_number')),
    mark      text NOT NULL CHECK (length(mark) BETWEEN 1 AND 64),
    record_id uuid NOT NULL,
    PRIMARY KEY (site, kind, mark)
);
CREATE UNIQUE INDEX current_marks_record ON current_marks (kind, record_id);
GRANT DELETE ON current_marks TO etchlog_app;

-- Existing current records; where two already share a mark (the old rules
-- allowed it by correction) the older record keeps it, and the other can be
-- corrected to a free mark. current_marks is derived: the service may delete
-- from it (a correction releasing a mark), never update it.
INSERT INTO current_marks (site, kind, mark, record_id)
SELECT site, 'coupon_mark', coupon_mark, id FROM coupons cur
WHERE NOT EXISTS (SELECT 1 FROM coupons l WHERE l.id = cur.id AND l.revision > cur.revision)
ORDER BY id
ON CONFLICT DO NOTHING;
INSERT INTO current_marks (site, kind, mark, record_id)
SELECT site, 'record_number', record_number, id FROM qualification_records cur
WHERE NOT EXISTS (SELECT 1 FROM qualification_records l WHERE l.id = cur.id AND l.revision > cur.revision)
ORDER BY id
ON CONFLICT DO NOTHING;

DROP INDEX coupons_mark_key;
DROP INDEX qualification_records_number_key;
CREATE INDEX coupons_mark ON coupons (site, coupon_mark);
CREATE INDEX qualification_records_number ON qualification_records (site, record_number);
