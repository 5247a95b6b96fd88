package predict

import (
	"errors"
	"fmt"
	"math"

	"etchlog/predict/lsq"
)

// PenetrationFit is a Jackson penetration calibration in log space:
//
//	ln P = c₀ + a·ln I + b·ln S + c·ln V + ε,  ε ~ N(0, σ²)
//
// with P penetration in mm, I current in A, S travel speed in mm/s and V
// arc voltage in V (each divided by its unit before the logarithm). For
// ModelJacksonFixed only c₀ = ln K is fitted and Coef, StdErr and Cov have
// one entry; for ModelJacksonFree they follow Terms (c₀, a, b, c).
type PenetrationFit struct {
	Model  ModelKind   `json:"model"`
	Terms  []string    `json:"terms"`
	Coef   []float64   `json:"coef"`
	StdErr []float64   `json:"std_err"`
	Cov    [][]float64 `json:"cov"`
	// Exponents used for I, S and V: published values or fitted a, b, c.
	CurrentExponent     float64 `json:"current_exponent"`
	TravelSpeedExponent float64 `json:"travel_speed_exponent"`
	VoltageExponent     float64 `json:"voltage_exponent"`
	// KMM = exp(c₀) is the penetration in mm the model gives at I = 1 A,
	// S = 1 mm/s, V = 1 V; for the fixed model it is the metric Jackson K,
	// in mm per (A⁴·s/(mm·V²))^(1/3). KStdErrMM = K·SE(c₀) (delta method).
	KMM       float64 `json:"k_mm"`
	KStdErrMM float64 `json:"k_std_err_mm"`
	// ResidualSDLn is σ̂ in ln(mm); e^σ̂ − 1 is roughly the relative scatter.
	ResidualSDLn float64 `json:"residual_sd_ln"`
	// R2 is 1 − RSS/Σ(ln Pᵢ − mean ln P)², the share of the log-penetration
	// variance the model explains (may be negative for the fixed model).
	R2        float64        `json:"r2"`
	N         int            `json:"n"`
	DoF       int            `json:"dof"`
	SampleIDs []string       `json:"sample_ids"`
	FTest     *ExponentFTest `json:"f_test,omitempty"`
	// Identifiability (free-exponent fit only) is how independently ln I,
	// ln S and ln V varied across the coupons.
	Identifiability *Identifiability `json:"identifiability,omitempty"`
}

// ExponentFTest is the nested-model F test of the fixed published Jackson
// exponents (restricted model, 3 restrictions: a = 4/3, b = −1/3, c = −2/3,
// free intercept) against the free-exponent fit. A small PValue means the
// shop's coupons do not follow the published exponents.
type ExponentFTest struct {
	F           float64 `json:"f"`
	DF1         int     `json:"df1"`
	DF2         int     `json:"df2"`
	PValue      float64 `json:"p_value"`
	RSSFixedLn2 float64 `json:"rss_fixed_ln2"`
	RSSFreeLn2  float64 `json:"rss_free_ln2"`
}

// PenetrationInterval is a back-transformed prediction at one setting.
// MedianMM = exp(η̂) is the median (not the mean) of the log-normal
// penetration; Mean* bound that median at Level, Pred* bound a new coupon.
type PenetrationInterval struct {
	Level      float64 `json:"level"`
	MedianMM   float64 `json:"median_mm"`
	MeanLowMM  float64 `json:"mean_low_mm"`
	MeanHighMM float64 `json:"mean_high_mm"`
	PredLowMM  float64 `json:"pred_low_mm"`
	PredHighMM float64 `json:"pred_high_mm"`
}

// calSolution keeps what diagnostics need from a fit.
type calSolution struct {
	ids           []string
	y, resid, lev []float64
	p, dof        int
	sigma         float64
}

// jacksonLogs validates the coupons and returns ln I, ln S, ln V, ln P.
func jacksonLogs(samples []PenetrationSample) (li, ls, lv, lp []float64, ids []string, err error) {
	n := len(samples)
	li, ls, lv, lp = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	ids = make([]string, n)
	for i, s := range samples {
		for _, c := range []struct {
			b calBound
			v float64
		}{{calCurrent, s.CurrentA}, {calVoltage, s.VoltageV}, {calTravel, s.TravelSpeedMMPerS}, {calPenetration, s.PenetrationMM}} {
			if err := c.b.check(s.ID, c.v); err != nil {
				return nil, nil, nil, nil, nil, err
			}
		}
		li[i], ls[i] = math.Log(s.CurrentA), math.Log(s.TravelSpeedMMPerS)
		lv[i], lp[i] = math.Log(s.VoltageV), math.Log(s.PenetrationMM)
		ids[i] = s.ID
	}
	return li, ls, lv, lp, ids, nil
}

// FitPenetrationFixed fits K of the Jackson law P = K·(I⁴/(S·V²))^(1/3)
// with the published exponents, in closed form:
// ln K = mean(ln P − (1/3)·ln(I⁴/(S·V²))), SE(ln K) = σ̂/√n, n − 1 dof.
func FitPenetrationFixed(samples []PenetrationSample) (PenetrationFit, error) {
	fit, _, err := jacksonFixed(samples)
	return fit, err
}

func jacksonFixed(samples []PenetrationSample) (PenetrationFit, calSolution, error) {
	if len(samples) < 2 {
		return PenetrationFit{}, calSolution{}, fmt.Errorf("%w: the fixed-exponent Jackson fit needs at least 2 coupons, have %d", ErrTooFewSamples, len(samples))
	}
	li, ls, lv, lp, ids, err := jacksonLogs(samples)
	if err != nil {
		return PenetrationFit{}, calSolution{}, err
	}
	n := len(samples)
	y := make([]float64, n)
	for i := range y {
		y[i] = lp[i] - JacksonCurrentExponent*li[i] - JacksonTravelExponent*ls[i] - JacksonVoltageExponent*lv[i]
	}
	lnK := calMean(y)
	sol := calSolution{ids: ids, y: y, resid: make([]float64, n), lev: make([]float64, n), p: 1, dof: n - 1}
	rss := 0.0
	for i, v := range y {
		sol.resid[i] = v - lnK
		sol.lev[i] = 1 / float64(n)
		rss += sol.resid[i] * sol.resid[i]
	}
	sol.sigma = math.Sqrt(rss / float64(sol.dof))
	se := sol.sigma / math.Sqrt(float64(n))
	fit := PenetrationFit{
		Model: ModelJacksonFixed, Terms: []string{"ln_k"},
		Coef: []float64{lnK}, StdErr: []float64{se}, Cov: [][]float64{{se * se}},
		CurrentExponent: JacksonCurrentExponent, TravelSpeedExponent: JacksonTravelExponent,
		VoltageExponent: JacksonVoltageExponent,
		KMM:             math.Exp(lnK), KStdErrMM: math.Exp(lnK) * se,
		ResidualSDLn: sol.sigma, R2: calR2(rss, lp), N: n, DoF: sol.dof, SampleIDs: ids,
	}
	return fit, sol, nil
}

// calMean is the two-pass mean: the plain mean corrected by the mean of
// the deviations, which removes most of its rounding error.
func calMean(v []float64) float64 {
	m, d := 0.0, 0.0
	for _, x := range v {
		m += x
	}
	m /= float64(len(v))
	for _, x := range v {
		d += x - m
	}
	return m + d/float64(len(v))
}

// calR2 is 1 − rss/Σ(yᵢ − ȳ)², or 0 when y has no variation.
func calR2(rss float64, y []float64) float64 {
	m, tss := calMean(y), 0.0
	for _, v := range y {
		tss += (v - m) * (v - m)
	}
	if tss == 0 {
		return 0
	}
	return 1 - rss/tss
}

// calFitError maps lsq errors to the calibration sentinels.
func calFitError(model ModelKind, err error) error {
	switch {
	case errors.Is(err, lsq.ErrRankDeficient):
		return fmt.Errorf("%w: %s regressors are collinear: %w", ErrDegenerate, model, err)
	case errors.Is(err, lsq.ErrTooFewObservations):
		return fmt.Errorf("%w: %s: %w", ErrTooFewSamples, model, err)
	}
	return fmt.Errorf("predict: %s fit: %w", model, err)
}

// JacksonK returns the fitted metric Jackson coefficient for use with the
// forward model (PenetrationMM); only a ModelJacksonFixed fit has one.
func (f PenetrationFit) JacksonK() (JacksonK, error) {
	if f.Model != ModelJacksonFixed {
		return JacksonK{}, fmt.Errorf("%w: model %q has fitted exponents, not a Jackson K", ErrInvalidFit, f.Model)
	}
	k := JacksonK{Value: f.KMM, Units: JacksonUnitsMetric}
	return k, k.Validate()
}
