-- Drift charts kept between writes. All three tables are DERIVED data,
-- recomputable from the records (Store.RecheckDrift recomputes them and
-- compares), so that a coupon write in a calibrated group replaces its own
-- coupon's point instead of reading the whole group again.
--
-- calibration_fitted: the coupons a calibration stored by its selection was
-- fitted to (the selection as of the fit, which no later write changes; for a
-- calibration stored with its coupon_ids, those ids). Written once per
-- calibration: when it is created, in the same pass as its fit, or the first
-- time a chart needs it (older calibrations). calibration_fitted_sets says
-- whose set is stored, and how many coupons it holds.
CREATE TABLE calibration_fitted_sets (
    site           text    NOT NULL,
    calibration_id uuid    NOT NULL,
    coupons        integer NOT NULL CHECK (coupons >= 0),
    PRIMARY KEY (site, calibration_id)
);
CREATE TABLE calibration_fitted (
    site           text NOT NULL,
    calibration_id uuid NOT NULL,
    coupon_id      uuid NOT NULL,
    PRIMARY KEY (site, calibration_id, coupon_id)
);

-- drift_points: one row per coupon on a drift chart (drift_group is the
-- chart's key, as in flags.drift_group): a current coupon of the group that
-- its chart's calibration was not fitted to and that it can judge, with its
-- residual and prediction SD and what the chart splits by. drift_charts says
-- which calibration a chart's points are against; a chart without a row (or
-- with another calibration than the one in use) is drawn again from the
-- records by the next write that touches it.
CREATE TABLE drift_charts (
    site           text NOT NULL,
    drift_group    text NOT NULL CHECK (length(drift_group) <= 300),
    calibration_id uuid NOT NULL,
    PRIMARY KEY (site, drift_group)
);
CREATE TABLE drift_points (
    site            text             NOT NULL,
    drift_group     text             NOT NULL,
    coupon_id       uuid             NOT NULL,
    calibration_id  uuid             NOT NULL,
    welded_on       date             NOT NULL,
    coupon_mark     text             NOT NULL,
    procedure_id    uuid,
    welder_id       text             NOT NULL,
    power_source_id text             NOT NULL,
    filler_lot      text             NOT NULL,
    residual        double precision NOT NULL,
    sd              double precision NOT NULL CHECK (sd > 0),
    PRIMARY KEY (site, drift_group, coupon_id)
);
-- A chart reads its points in welding order (ties by coupon id).
CREATE INDEX drift_points_order ON drift_points (site, drift_group, welded_on, coupon_id);

-- Derived: a write replaces its coupon's point, an activation its chart's.
GRANT DELETE ON drift_charts, drift_points TO etchlog_app;
