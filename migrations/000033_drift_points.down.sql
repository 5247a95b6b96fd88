DROP TABLE drift_points;
DROP TABLE drift_charts;
DROP TABLE calibration_fitted;
DROP TABLE calibration_fitted_sets;
