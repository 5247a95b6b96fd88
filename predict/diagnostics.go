package predict

import (
	"fmt"
	"math"
)

// Response spaces in which Diagnostics report observed, fitted and residual values.
const (
	// ResponseLnPenetrationMM is ln(P / 1 mm), the Jackson fits' response.
	ResponseLnPenetrationMM = "ln_penetration_mm"
	// ResponseMeltingRateKgPerH is the melting rate in kg/h.
	ResponseMeltingRateKgPerH = "melting_rate_kg_h"
)

// Diagnostics are per-sample regression diagnostics of one calibration fit.
// Observed, Fitted and Residual are in the Response space.
type Diagnostics struct {
	Model    ModelKind `json:"model"`
	Response string    `json:"response"`
	Level    float64   `json:"level"`
	// LeverageCutoff (2p/n) and CooksDistanceCutoff (4/n) are the values
	// above which a sample is marked high_leverage or high_cooks_distance.
	LeverageCutoff      float64            `json:"leverage_cutoff"`
	CooksDistanceCutoff float64            `json:"cooks_distance_cutoff"`
	Samples             []SampleDiagnostic `json:"samples"`
}

// SampleDiagnostic describes how one sample sits in its fit. With e the
// residual, h the leverage, σ̂ the residual SD, p coefficients and ν = n − p:
// internal r = e/(σ̂·√(1−h)); external t = r·√((ν−1)/(ν−r²)), the residual
// studentized with σ̂ from the fit without the sample; Cook's D = r²·h/(p·(1−h)).
// OutsidePrediction is true when the sample lies outside the leave-one-out
// prediction interval at Level (the interval from the fit without it),
// which is exactly |t| > t-quantile(1−(1−Level)/2, ν−1). When h = 1 the
// sample alone fixes a coefficient and when ν < 2 or σ̂ = 0 the studentized
// values are undefined; they are then reported as 0 and the flag as false.
// When all other samples fit exactly, t is ±MaxFloat64 (JSON has no ∞).
type SampleDiagnostic struct {
	ID                  string  `json:"id"`
	Observed            float64 `json:"observed"`
	Fitted              float64 `json:"fitted"`
	Residual            float64 `json:"residual"`
	Leverage            float64 `json:"leverage"`
	StudentizedInternal float64 `json:"studentized_internal"`
	StudentizedExternal float64 `json:"studentized_external"`
	CooksDistance       float64 `json:"cooks_distance"`
	OutsidePrediction   bool    `json:"outside_prediction_interval"`
	// HighLeverage is h > 2p/n, twice the mean leverage: the sample's
	// setting lies far from the others' and pulls the fit towards itself.
	// HighCooksDistance is D > 4/n: leaving the sample out moves the
	// fitted values noticeably. Both are screening marks, not verdicts.
	HighLeverage      bool `json:"high_leverage"`
	HighCooksDistance bool `json:"high_cooks_distance"`
}

// DiagnosePenetration fits model (ModelJacksonFixed or ModelJacksonFree)
// to the coupons and returns the diagnostics in ln(mm) at level.
func DiagnosePenetration(samples []PenetrationSample, model ModelKind, level float64) (Diagnostics, error) {
	if err := checkLevel(level); err != nil {
		return Diagnostics{}, err
	}
	var sol calSolution
	var err error
	switch model {
	case ModelJacksonFixed:
		_, sol, err = jacksonFixed(samples)
	case ModelJacksonFree:
		_, sol, err = jacksonFree(samples)
	default:
		return Diagnostics{}, &InputError{Field: "penetration model", Reason: fmt.Sprintf("unknown model %q", model)}
	}
	if err != nil {
		return Diagnostics{}, err
	}
	return sol.diagnose(model, ResponseLnPenetrationMM, level), nil
}

// DiagnoseMeltingRate fits the Lesnewich model and returns the diagnostics
// in kg/h at level.
func DiagnoseMeltingRate(samples []MeltingSample, level float64) (Diagnostics, error) {
	if err := checkLevel(level); err != nil {
		return Diagnostics{}, err
	}
	_, sol, err := lesnewichFit(samples)
	if err != nil {
		return Diagnostics{}, err
	}
	return sol.diagnose(ModelLesnewich, ResponseMeltingRateKgPerH, level), nil
}

// diagnose computes the per-sample diagnostics of a solved fit.
func (s calSolution) diagnose(model ModelKind, response string, level float64) Diagnostics {
	n := float64(len(s.y))
	d := Diagnostics{Model: model, Response: response, Level: level, Samples: make([]SampleDiagnostic, len(s.y)),
		LeverageCutoff: 2 * float64(s.p) / n, CooksDistanceCutoff: 4 / n}
	nu := float64(s.dof)
	crit := math.Inf(1)
	if s.dof >= 2 {
		crit = tQuantile(level, s.dof-1)
	}
	for i := range s.y {
		e, h := s.resid[i], s.lev[i]
		sd := SampleDiagnostic{ID: s.ids[i], Observed: s.y[i], Fitted: s.y[i] - e, Residual: e, Leverage: h}
		// 1 − h below ~1e-12 means the sample is fitted exactly by construction.
		if 1-h > 1e-12 && s.sigma > 0 {
			r := e / (s.sigma * math.Sqrt(1-h))
			sd.StudentizedInternal = r
			sd.CooksDistance = r * r * h / (float64(s.p) * (1 - h))
			switch {
			case s.dof < 2:
			case nu-r*r > 0:
				t := r * math.Sqrt((nu-1)/(nu-r*r))
				sd.StudentizedExternal = t
				sd.OutsidePrediction = math.Abs(t) > crit
			default: // the other samples fit exactly: t is infinite
				sd.StudentizedExternal = math.Copysign(math.MaxFloat64, r)
				sd.OutsidePrediction = true
			}
		}
		sd.HighLeverage, sd.HighCooksDistance = h > d.LeverageCutoff, sd.CooksDistance > d.CooksDistanceCutoff
		d.Samples[i] = sd
	}
	return d
}
