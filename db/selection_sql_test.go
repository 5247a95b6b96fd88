package db

// SiteCouponsSQL is the calibration selection query, for the benchmark that
// COPYs its rows out as the baseline of a streamed fit.
const SiteCouponsSQL = siteCoupons
