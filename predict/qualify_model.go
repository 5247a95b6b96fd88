package predict

import (
	"fmt"
)

// Variables of the model flags (never rule variables).
const (
	// VarPenetration is the measured penetration (mean of the coupon's
	// sections, mm) checked against the calibration's prediction interval.
	VarPenetration Variable = "penetration_mm"
	// VarPredictedPenetration is the calibrated median penetration (mm) at
	// the record's current, voltage and travel speed, checked against the
	// procedure's required minimum.
	VarPredictedPenetration Variable = "predicted_penetration_mm"
)

// PenetrationCheck compares records with a shop's active Jackson
// calibration: a measured penetration outside the prediction interval for
// one new coupon at Fit's level (the coupon does not behave like the ones
// the model was fitted to), and a predicted penetration below the
// procedure's required minimum (MinPenetrationMM, nil when it states none).
//
// The minimum is judged on Basis: BasisLowerBound (the default, "") the
// lower end of the prediction interval, the safe side; BasisMedian the median.
type PenetrationCheck struct {
	Fit              PenetrationFit
	Level            float64
	Label            string // names the calibration in flag details
	MinPenetrationMM *float64
	Basis            string
}

// Evaluate appends the model flags of one record welded with the
// observation's current, voltage and travel speed; measuredMM is nil when
// the record has no measured section (production records never have).
// A record without the three values gets one not_checkable flag.
func (p PenetrationCheck) Evaluate(o *Observation, measuredMM *float64, dst []Flag) []Flag {
	i, okI := o.Number(VarCurrent)
	v, okV := o.Number(VarVoltage)
	s, okS := o.Number(VarTravelSpeed)
	if !okI || !okV || !okS {
		return append(dst, Flag{Kind: FlagNotCheckable, Variable: VarPredictedPenetration, Unit: "mm",
			Detail: "a penetration prediction needs current, voltage and travel speed, and one is not recorded"})
	}
	iv, err := p.Fit.Predict(i, v, s, p.Level)
	if err != nil {
		return append(dst, Flag{Kind: FlagNotCheckable, Variable: VarPredictedPenetration, Unit: "mm",
			Detail: fmt.Sprintf("calibration %s cannot predict here: %v", p.Label, err)})
	}
	if measuredMM != nil {
		band := Band{iv.PredLowMM, iv.PredHighMM}
		r := VariableRange{Variable: VarPenetration, Unit: "mm", Bands: []Band{band}}
		if f, out := outside(&r, *measuredMM); out {
			f.Kind = FlagModel
			f.Detail = fmt.Sprintf("measured penetration %.3g mm is %s the %.0f %% prediction interval %s mm of calibration %s by %.3g mm",
				*measuredMM, f.Direction, p.Level*100, band, p.Label, *f.Excess)
			dst = append(dst, f)
		}
	}
	if p.MinPenetrationMM == nil {
		return dst
	}
	judged, basis := iv.PredLowMM, fmt.Sprintf("the lower bound of its %.0f %% prediction interval", p.Level*100)
	if p.Basis == BasisMedian {
		judged, basis = iv.MedianMM, "the median"
	}
	if need := *p.MinPenetrationMM; judged < need {
		ex := need - judged
		pct := ex / need * 100
		dst = append(dst, Flag{Kind: FlagModel, Variable: VarPredictedPenetration, Unit: "mm", Value: &judged, Min: &need,
			Direction: Below, Excess: &ex, ExcessPct: &pct,
			Detail: fmt.Sprintf("calibration %s predicts %.3g mm penetration on %s (median %.3g mm; %.0f %% interval %.3g–%.3g mm), below the procedure's required %.3g mm",
				p.Label, judged, basis, iv.MedianMM, p.Level*100, iv.PredLowMM, iv.PredHighMM, need)})
	}
	return dst
}

// SectionMean returns the arithmetic mean of a coupon's per-section values
// (penetration, fused area…, in their own unit): their plain sum in the given
// order divided by their number, or nil when there are none.
func SectionMean(sections []float64) *float64 {
	if len(sections) == 0 {
		return nil
	}
	sum := 0.0
	for _, x := range sections {
		sum += x
	}
	m := sum / float64(len(sections))
	return &m
}
