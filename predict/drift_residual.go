package predict

import (
	"fmt"
	"math"
)

// Residual returns a new coupon's residual against the fit in ln(mm),
// ln P − η̂ (η̂ the fitted log median at its current, voltage and travel
// speed), and the SD of that residual if the calibration still holds,
// √(σ̂² + gᵀ·Cov·g): the two a drift chart standardises by.
func (f PenetrationFit) Residual(s PenetrationSample) (res, sd float64, err error) {
	if err := calPenetration.check(s.ID, s.PenetrationMM); err != nil {
		return 0, 0, err
	}
	iv, err := f.Predict(s.CurrentA, s.VoltageV, s.TravelSpeedMMPerS, 0.5)
	if err != nil {
		return 0, 0, err
	}
	g, _ := DesignRow(f.Model, DesignPoint{CurrentA: s.CurrentA, VoltageV: s.VoltageV, TravelSpeedMMPerS: s.TravelSpeedMMPerS})
	v, err := quadForm(f.Cov, g)
	if err != nil {
		return 0, 0, err
	}
	sd = math.Sqrt(f.ResidualSDLn*f.ResidualSDLn + v)
	if !(sd > 0) {
		return 0, 0, fmt.Errorf("%w: zero residual SD: the fit's coupons agree exactly, so no drift can be judged", ErrInvalidFit)
	}
	return math.Log(s.PenetrationMM) - math.Log(iv.MedianMM), sd, nil
}

// Residual returns a new measurement's residual against the fit in kg/h,
// MR − (α·I + β·L·I²), and its SD if the calibration still holds,
// √(σ̂² + gᵀ·Cov·g).
func (f MeltingFit) Residual(s MeltingSample) (res, sd float64, err error) {
	iv, err := f.Predict(s.CurrentA, s.ExtensionMM, 0.5)
	if err != nil {
		return 0, 0, err
	}
	g := []float64{s.CurrentA, s.ExtensionMM * s.CurrentA * s.CurrentA}
	v, err := quadForm(f.Cov, g)
	if err != nil {
		return 0, 0, err
	}
	sd = math.Sqrt(f.ResidualSDKgPerH*f.ResidualSDKgPerH + v)
	if !(sd > 0) {
		return 0, 0, fmt.Errorf("%w: zero residual SD: the fit's measurements agree exactly, so no drift can be judged", ErrInvalidFit)
	}
	return s.MeltingRateKgPerH - iv.MeanKgPerH, sd, nil
}
