-- flags: one more kind, "drift". A calibration group's new coupons (those its
-- active calibration was not fitted to), or those of one power source, welder
-- or wire lot, whose residuals against that calibration have moved (two-sided
-- tabular CUSUM). A drift flag is about a run of coupons: its subject is the
-- coupon where the shift is estimated to have begun, and drift_group names the
-- model family and calibration group whose chart raised it, so a recompute of
-- that chart rewrites exactly its flags. Derived data like every flag.
ALTER TABLE flags DROP CONSTRAINT flags_kind_check;
ALTER TABLE flags ADD CONSTRAINT flags_kind_check
    CHECK (kind IN ('range', 'not_checkable', 'model', 'requirement', 'suspect_units', 'drift'));
ALTER TABLE flags ADD COLUMN drift_group text;
ALTER TABLE flags ADD CONSTRAINT flags_drift_group_check
    CHECK ((kind = 'drift') = (drift_group IS NOT NULL) AND length(drift_group) <= 300);
CREATE INDEX flags_drift_group ON flags (site, drift_group) WHERE kind = 'drift';

-- coupon_plans: a plan of trial coupons an engineer exported from the
-- proposals: the group, the model, what was asked, the proposals (each with
-- its reserved mark, setting and the standard errors expected after it) and
-- why. A record: append-only, logged as a leaf of kind coupon_plan.
-- coupon_plan_marks: the marks a plan reserves, one row each. A mark is
-- reserved by one plan only (primary key) and only while no current coupon
-- holds it (checked against current_marks when the plan is written); the
-- coupon welded to the plan then claims it like any mark, which is how a
-- planned coupon comes back.
CREATE TABLE coupon_plans (
    site             text        NOT NULL,
    id               uuid        NOT NULL,
    revision         integer     NOT NULL DEFAULT 1 CHECK (revision = 1),
    created_at       timestamptz NOT NULL,
    created_by       text        NOT NULL CHECK (created_by <> ''),
    procedure_id     uuid        NOT NULL,
    model            text        NOT NULL CHECK (model IN ('jackson_fixed', 'jackson_free', 'lesnewich')),
    process          text        NOT NULL CHECK (process IN ('GMAW', 'FCAW', 'GTAW', 'SMAW', 'SAW')),
    wire_diameter_mm double precision NOT NULL CHECK (wire_diameter_mm BETWEEN 0.6 AND 4.0),
    shielding_gas    text        NOT NULL CHECK (length(shielding_gas) <= 64),
    joint_type       text        NOT NULL CHECK (joint_type IN ('bead_on_plate', 'butt', 'fillet', 'lap', 'corner', 'edge')),
    request          jsonb       NOT NULL CHECK (jsonb_typeof(request) = 'object'),
    plan             jsonb       NOT NULL CHECK (jsonb_typeof(plan) = 'object'),
    marks            text[]      NOT NULL CHECK (cardinality(marks) BETWEEN 1 AND 50),
    note             text        NOT NULL DEFAULT '' CHECK (length(note) <= 2000),
    PRIMARY KEY (site, id)
);
CREATE INDEX coupon_plans_procedure ON coupon_plans (site, procedure_id, created_at);
CREATE TRIGGER coupon_plans_append_only BEFORE UPDATE OR DELETE ON coupon_plans
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER coupon_plans_no_truncate BEFORE TRUNCATE ON coupon_plans
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();

CREATE TABLE coupon_plan_marks (
    site     text    NOT NULL,
    mark     text    NOT NULL CHECK (length(mark) BETWEEN 1 AND 64),
    plan_id  uuid    NOT NULL,
    position integer NOT NULL CHECK (position >= 1),
    PRIMARY KEY (site, mark),
    UNIQUE (site, plan_id, position)
);
CREATE TRIGGER coupon_plan_marks_append_only BEFORE UPDATE OR DELETE ON coupon_plan_marks
    FOR EACH ROW EXECUTE FUNCTION etchlog_append_only();
CREATE TRIGGER coupon_plan_marks_no_truncate BEFORE TRUNCATE ON coupon_plan_marks
    FOR EACH STATEMENT EXECUTE FUNCTION etchlog_append_only();
