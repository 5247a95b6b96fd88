package predict

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"etchlog/predict/lsq"
)

// FitPenetrationFree fits ln P = c₀ + a·ln I + b·ln S + c·ln V by linear
// least squares (package lsq) on ln(mm), ln(A), ln(mm/s), ln(V), and tests
// the published Jackson exponents against it (FTest). It needs at least 5
// coupons and spread in current, voltage and travel speed that is not
// collinear: above MaxVIF for any of ln I, ln S, ln V it refuses, naming
// what moves together (see Identifiability, which the fit reports).
func FitPenetrationFree(samples []PenetrationSample) (PenetrationFit, error) {
	fit, _, err := jacksonFree(samples)
	return fit, err
}

func jacksonFree(samples []PenetrationSample) (PenetrationFit, calSolution, error) {
	const p = 4
	n := len(samples)
	if n <= p {
		return PenetrationFit{}, calSolution{}, fmt.Errorf("%w: the free-exponent Jackson fit needs at least %d coupons, have %d", ErrTooFewSamples, p+1, n)
	}
	li, ls, lv, lp, ids, err := jacksonLogs(samples)
	if err != nil {
		return PenetrationFit{}, calSolution{}, err
	}
	for _, s := range []struct {
		what, unit string
		field      func(PenetrationSample) float64
	}{
		{"current", "A", func(s PenetrationSample) float64 { return s.CurrentA }},
		{"travel speed", "mm/s", func(s PenetrationSample) float64 { return s.TravelSpeedMMPerS }},
		{"voltage", "V", func(s PenetrationSample) float64 { return s.VoltageV }},
	} {
		vals := make([]float64, n)
		for i, smp := range samples {
			vals[i] = s.field(smp)
		}
		if err := calSpread(s.what, s.unit, vals); err != nil {
			return PenetrationFit{}, calSolution{}, err
		}
	}
	ident := identifiability(li, ls, lv)
	if err := ident.refusal(); err != nil {
		return PenetrationFit{}, calSolution{}, err
	}
	X := mat.NewDense(n, p, nil)
	for i := range samples {
		X.SetRow(i, []float64{1, li[i], ls[i], lv[i]})
	}
	res, err := lsq.Fit(X, lp, lsq.Options{})
	if err != nil {
		return PenetrationFit{}, calSolution{}, calFitError(ModelJacksonFree, err)
	}
	sol := calSolution{ids: ids, y: lp, resid: res.Residuals, lev: res.Leverage, p: p, dof: res.DoF, sigma: res.ResidualSD}
	fixed, _, err := jacksonFixed(samples)
	if err != nil {
		return PenetrationFit{}, calSolution{}, err
	}
	k := math.Exp(res.Coef[0])
	fit := PenetrationFit{
		Model: ModelJacksonFree, Terms: []string{"ln_k", "current_exponent", "travel_speed_exponent", "voltage_exponent"},
		Coef: res.Coef, StdErr: res.StdErr, Cov: covToRows(p, res.Cov.At),
		CurrentExponent: res.Coef[1], TravelSpeedExponent: res.Coef[2], VoltageExponent: res.Coef[3],
		KMM: k, KStdErrMM: k * res.StdErr[0], ResidualSDLn: res.ResidualSD, R2: res.R2,
		N: n, DoF: res.DoF, SampleIDs: ids,
		FTest:           exponentFTest(fixed.ResidualSDLn*fixed.ResidualSDLn*float64(fixed.DoF), res.RSS, n),
		Identifiability: &ident,
	}
	return fit, sol, nil
}

// exponentFTest compares the restricted (published exponents, n − 1 dof)
// and free (n − 4 dof) residual sums of squares:
// F = ((RSS_fixed − RSS_free)/3) / (RSS_free/(n − 4)), p = P(F(3, n−4) > F)
// (gonum distuv.F). A perfect free fit gives F = 0, p = 1 if the fixed fit
// is perfect too, else F = MaxFloat64, p = 0 (JSON has no infinity).
func exponentFTest(rssFixed, rssFree float64, n int) *ExponentFTest {
	t := &ExponentFTest{DF1: 3, DF2: n - 4, RSSFixedLn2: rssFixed, RSSFreeLn2: rssFree}
	// The free model nests the fixed one, so RSS_fixed ≥ RSS_free up to rounding.
	diff := math.Max(rssFixed-rssFree, 0)
	switch {
	case rssFree == 0 && diff == 0:
		t.F, t.PValue = 0, 1
	case rssFree == 0:
		t.F, t.PValue = math.MaxFloat64, 0
	default:
		t.F = (diff / float64(t.DF1)) / (rssFree / float64(t.DF2))
		t.PValue = distuv.F{D1: float64(t.DF1), D2: float64(t.DF2)}.Survival(t.F)
	}
	return t
}

// Predict returns the median penetration in mm at current I (A), voltage V
// (V) and travel speed S (mm/s), with a confidence interval for the median
// and a prediction interval for one new coupon at the given level (e.g.
// 0.95), from the stored coefficients, covariance and residual SD only:
// η̂ = gᵀc, se² = gᵀ·Cov·g, half-widths t·se and t·√(σ̂² + se²) in ln(mm),
// t the Student t quantile with DoF degrees of freedom; then exp().
func (f PenetrationFit) Predict(currentA, voltageV, travelSpeedMMPerS, level float64) (PenetrationInterval, error) {
	if err := checkLevel(level); err != nil {
		return PenetrationInterval{}, err
	}
	for _, c := range []struct {
		field string
		v     float64
	}{{"current A", currentA}, {"arc voltage V", voltageV}, {"travel speed mm/s", travelSpeedMMPerS}} {
		if err := mustBePositive(c.field, c.v); err != nil {
			return PenetrationInterval{}, err
		}
	}
	li, lv, ls := math.Log(currentA), math.Log(voltageV), math.Log(travelSpeedMMPerS)
	var g []float64
	switch f.Model {
	case ModelJacksonFixed:
		g = []float64{1}
	case ModelJacksonFree:
		g = []float64{1, li, ls, lv}
	default:
		return PenetrationInterval{}, fmt.Errorf("%w: model %q is not a Jackson penetration model", ErrInvalidFit, f.Model)
	}
	if len(f.Coef) != len(g) || f.DoF < 1 || !(f.ResidualSDLn >= 0) {
		return PenetrationInterval{}, fmt.Errorf("%w: %s with %d coefficients, %d dof, residual SD %g", ErrInvalidFit, f.Model, len(f.Coef), f.DoF, f.ResidualSDLn)
	}
	v, err := quadForm(f.Cov, g)
	if err != nil {
		return PenetrationInterval{}, err
	}
	eta := f.Coef[0]
	if f.Model == ModelJacksonFixed {
		eta += JacksonCurrentExponent*li + JacksonTravelExponent*ls + JacksonVoltageExponent*lv
	} else {
		eta += f.Coef[1]*li + f.Coef[2]*ls + f.Coef[3]*lv
	}
	t := tQuantile(level, f.DoF)
	hm, hp := t*math.Sqrt(v), t*math.Sqrt(f.ResidualSDLn*f.ResidualSDLn+v)
	return PenetrationInterval{
		Level: level, MedianMM: math.Exp(eta),
		MeanLowMM: math.Exp(eta - hm), MeanHighMM: math.Exp(eta + hm),
		PredLowMM: math.Exp(eta - hp), PredHighMM: math.Exp(eta + hp),
	}, nil
}
