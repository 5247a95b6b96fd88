package predict

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"etchlog/predict/lsq"
)

// MeltingFit is a Lesnewich melting-rate calibration MR = α·I + β·L·I² + ε,
// fitted by least squares without an intercept (MR in kg/h, I in A, L
// electrode extension in mm). Cov is the covariance of (α, β) in the units
// of AlphaKgPerHA and BetaKgPerHA2MM.
type MeltingFit struct {
	Model                ModelKind `json:"model"`
	AlphaKgPerHA         float64   `json:"alpha_kg_h_a"`
	BetaKgPerHA2MM       float64   `json:"beta_kg_h_a2_mm"`
	AlphaStdErrKgPerHA   float64   `json:"alpha_std_err_kg_h_a"`
	BetaStdErrKgPerHA2MM float64   `json:"beta_std_err_kg_h_a2_mm"`
	// AlphaLbPerHA and BetaLbPerHA2In are α and β in inch-pound units
	// (lb/(h·A), lb/(h·A²·in)), exact conversions of the two above; the
	// standard errors convert by the same factors.
	AlphaLbPerHA         float64     `json:"alpha_lb_h_a"`
	BetaLbPerHA2In       float64     `json:"beta_lb_h_a2_in"`
	AlphaStdErrLbPerHA   float64     `json:"alpha_std_err_lb_h_a"`
	BetaStdErrLbPerHA2In float64     `json:"beta_std_err_lb_h_a2_in"`
	Cov                  [][]float64 `json:"cov"`
	ResidualSDKgPerH     float64     `json:"residual_sd_kg_h"`
	// R2Uncentered is 1 − RSS/Σ MRᵢ²: the model has no intercept.
	R2Uncentered float64  `json:"r2_uncentered"`
	N            int      `json:"n"`
	DoF          int      `json:"dof"`
	SampleIDs    []string `json:"sample_ids"`
}

// MeltingRateInterval is a melting-rate prediction at one setting: the
// fitted mean, a confidence interval for it and a prediction interval for
// one new measurement, all in kg/h, at Level.
type MeltingRateInterval struct {
	Level          float64 `json:"level"`
	MeanKgPerH     float64 `json:"mean_kg_h"`
	MeanLowKgPerH  float64 `json:"mean_low_kg_h"`
	MeanHighKgPerH float64 `json:"mean_high_kg_h"`
	PredLowKgPerH  float64 `json:"pred_low_kg_h"`
	PredHighKgPerH float64 `json:"pred_high_kg_h"`
}

// FitMeltingRate fits the Lesnewich coefficients α (kg/(h·A)) and β
// (kg/(h·A²·mm)) to at least 3 measurements. The two regressors I and L·I²
// are proportional, and the fit degenerate, when L·I has no spread.
func FitMeltingRate(samples []MeltingSample) (MeltingFit, error) {
	fit, _, err := lesnewichFit(samples)
	return fit, err
}

func lesnewichFit(samples []MeltingSample) (MeltingFit, calSolution, error) {
	const p = 2
	n := len(samples)
	if n <= p {
		return MeltingFit{}, calSolution{}, fmt.Errorf("%w: the Lesnewich fit needs at least %d measurements, have %d", ErrTooFewSamples, p+1, n)
	}
	X := mat.NewDense(n, p, nil)
	y, li, ids := make([]float64, n), make([]float64, n), make([]string, n)
	for i, s := range samples {
		for _, c := range []struct {
			b calBound
			v float64
		}{{calCurrent, s.CurrentA}, {calExtension, s.ExtensionMM}, {calMelting, s.MeltingRateKgPerH}} {
			if err := c.b.check(s.ID, c.v); err != nil {
				return MeltingFit{}, calSolution{}, err
			}
		}
		X.SetRow(i, []float64{s.CurrentA, s.ExtensionMM * s.CurrentA * s.CurrentA})
		y[i], li[i], ids[i] = s.MeltingRateKgPerH, s.ExtensionMM*s.CurrentA, s.ID
	}
	if err := calSpread("extension × current", "mm·A", li); err != nil {
		return MeltingFit{}, calSolution{}, fmt.Errorf("%w (e.g. one current and one extension)", err)
	}
	res, err := lsq.Fit(X, y, lsq.Options{})
	if err != nil {
		return MeltingFit{}, calSolution{}, calFitError(ModelLesnewich, err)
	}
	sol := calSolution{ids: ids, y: y, resid: res.Residuals, lev: res.Leverage, p: p, dof: res.DoF, sigma: res.ResidualSD}
	fit := MeltingFit{
		Model: ModelLesnewich, AlphaKgPerHA: res.Coef[0], BetaKgPerHA2MM: res.Coef[1],
		AlphaStdErrKgPerHA: res.StdErr[0], BetaStdErrKgPerHA2MM: res.StdErr[1],
		Cov: covToRows(p, res.Cov.At), ResidualSDKgPerH: res.ResidualSD, R2Uncentered: res.R2,
		N: n, DoF: res.DoF, SampleIDs: ids,
	}
	fit.WithInchPound()
	return fit, sol, nil
}

// WithInchPound fills the inch-pound forms of α, β and their standard
// errors from the metric ones (a fit stored before they existed gets them
// on read).
func (f *MeltingFit) WithInchPound() {
	f.AlphaLbPerHA, f.BetaLbPerHA2In = f.Lesnewich().InchPound()
	f.AlphaStdErrLbPerHA, f.BetaStdErrLbPerHA2In = Lesnewich{AlphaKgPerHA: f.AlphaStdErrKgPerHA, BetaKgPerHA2MM: f.BetaStdErrKgPerHA2MM}.InchPound()
}

// Lesnewich returns the fitted coefficients as the forward model.
func (f MeltingFit) Lesnewich() Lesnewich {
	return Lesnewich{AlphaKgPerHA: f.AlphaKgPerHA, BetaKgPerHA2MM: f.BetaKgPerHA2MM}
}

// Predict returns the fitted melting rate in kg/h at current I (A) and
// extension L (mm) with a confidence interval for the mean and a
// prediction interval for one new measurement at level, from the stored
// values only: g = (I, L·I²), se² = gᵀ·Cov·g, half-widths t·se and
// t·√(σ̂² + se²), t the Student t quantile with DoF degrees of freedom.
func (f MeltingFit) Predict(currentA, extensionMM, level float64) (MeltingRateInterval, error) {
	if err := checkLevel(level); err != nil {
		return MeltingRateInterval{}, err
	}
	if err := mustBePositive("current A", currentA); err != nil {
		return MeltingRateInterval{}, err
	}
	if err := mustBePositive("electrode extension mm", extensionMM); err != nil {
		return MeltingRateInterval{}, err
	}
	if f.Model != ModelLesnewich || f.DoF < 1 || !(f.ResidualSDKgPerH >= 0) {
		return MeltingRateInterval{}, fmt.Errorf("%w: model %q, %d dof, residual SD %g", ErrInvalidFit, f.Model, f.DoF, f.ResidualSDKgPerH)
	}
	g := []float64{currentA, extensionMM * currentA * currentA}
	v, err := quadForm(f.Cov, g)
	if err != nil {
		return MeltingRateInterval{}, err
	}
	mean := f.AlphaKgPerHA*g[0] + f.BetaKgPerHA2MM*g[1]
	t := tQuantile(level, f.DoF)
	hm, hp := t*math.Sqrt(v), t*math.Sqrt(f.ResidualSDKgPerH*f.ResidualSDKgPerH+v)
	return MeltingRateInterval{
		Level: level, MeanKgPerH: mean,
		MeanLowKgPerH: mean - hm, MeanHighKgPerH: mean + hm,
		PredLowKgPerH: mean - hp, PredHighKgPerH: mean + hp,
	}, nil
}
