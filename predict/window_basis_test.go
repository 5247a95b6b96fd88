package predict_test

import (
	"math"
	"strings"
	"testing"

	"etchlog/predict"
)

// TestWindowLowerBound: judged on the lower bound of the 95 % prediction
// interval for one new coupon, the window's penetration edge moves to higher
// current, so the window shrinks; at the new edge the fit's own interval
// (PenetrationFit.Predict: Student t, σ̂ and the coefficient covariance)
// puts the lower bound exactly at the minimum, while the median is above it.
func TestWindowLowerBound(t *testing.T) {
	samples := synergicSamples(false) // independent voltage: both fits accepted
	fixed, err := predict.FitPenetrationFixed(samples)
	if err != nil {
		t.Fatal(err)
	}
	free, err := predict.FitPenetrationFree(samples)
	if err != nil {
		t.Fatal(err)
	}
	k, err := fixed.JacksonK()
	if err != nil {
		t.Fatal(err)
	}
	const minMM, level = 1.5, 0.95
	for _, c := range []struct {
		name   string
		target predict.PenetrationTarget
		fit    predict.PenetrationFit
	}{
		{"fixed", predict.PenetrationTarget{MinMM: minMM, K: k}, fixed},
		{"free", predict.PenetrationTarget{MinMM: minMM, Fit: &free}, free},
	} {
		t.Run(c.name, func(t *testing.T) {
			in := predict.WindowInput{CurrentA: predict.Range{Min: 100, Max: 300}, VoltageV: predict.Range{Min: 20, Max: 24},
				TravelSpeedMMPerS: predict.Range{Min: 5, Max: 5}, VoltageSteps: 3}
			median := in
			median.Penetration = &c.target
			lower := in
			lt := c.target
			lt.LowerBound, lt.Level = &c.fit, level
			lower.Penetration = &lt
			wm, err := predict.ParameterWindow(median)
			if err != nil {
				t.Fatal(err)
			}
			wl, err := predict.ParameterWindow(lower)
			if err != nil {
				t.Fatal(err)
			}
			for i := range wm.Cells {
				cm, cl := wm.Cells[i].CurrentA, wl.Cells[i].CurrentA
				if !(cl.Lo > cm.Lo) || cl.LoLimit != predict.LimitPenetrationMin {
					t.Errorf("cell %d: lower-bound edge %.4g A (%s), median edge %.4g A; want the window to shrink", i, cl.Lo, cl.LoLimit, cm.Lo)
				}
				iv, err := c.fit.Predict(cl.Lo, wl.Cells[i].VoltageV, wl.Cells[i].TravelSpeedMMPerS, level)
				if err != nil {
					t.Fatal(err)
				}
				if math.Abs(iv.PredLowMM-minMM) > 1e-9*minMM || !(iv.MedianMM > minMM) {
					t.Errorf("cell %d at %.6g A: lower bound %.12g mm, median %.4g mm; want the lower bound at %g", i, cl.Lo, iv.PredLowMM, iv.MedianMM, minMM)
				}
			}
		})
	}
}

// TestModelFlagBasis: a setting whose median prediction meets the required
// minimum but whose prediction-interval lower bound does not is flagged on
// the lower-bound basis (the default) and not on the median basis.
func TestModelFlagBasis(t *testing.T) {
	fit, err := predict.FitPenetrationFixed(synergicSamples(false))
	if err != nil {
		t.Fatal(err)
	}
	iv, err := fit.Predict(200, 22, 5, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	need := (iv.MedianMM + iv.PredLowMM) / 2 // between the lower bound and the median
	var o predict.Observation
	o.SetNumber(predict.VarCurrent, 200)
	o.SetNumber(predict.VarVoltage, 22)
	o.SetNumber(predict.VarTravelSpeed, 5)
	check := predict.PenetrationCheck{Fit: fit, Level: 0.95, Label: "cal", MinPenetrationMM: &need}
	fl := check.Evaluate(&o, nil, nil)
	if len(fl) != 1 || *fl[0].Value != iv.PredLowMM || !strings.Contains(fl[0].Detail, "lower bound") {
		t.Errorf("lower-bound basis: flags %+v, want one on the lower bound %g", fl, iv.PredLowMM)
	}
	check.Basis = predict.BasisMedian
	if fl := check.Evaluate(&o, nil, nil); len(fl) != 0 {
		t.Errorf("median basis: flags %+v, want none (median %g ≥ %g)", fl, iv.MedianMM, need)
	}
}
