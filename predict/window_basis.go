package predict

import (
	"fmt"
	"math"
)

// Bases on which a minimum penetration is judged.
const (
	// BasisMedian: the model's median penetration must reach the minimum
	// (about one coupon in two at the edge falls short).
	BasisMedian = "median"
	// BasisLowerBound: the lower end of the prediction interval for one new
	// coupon at the calibration's level must reach it (the safe side: at a
	// 95 % two-sided level, about one coupon in forty at the edge falls short).
	BasisLowerBound = "lower_bound"
)

// lowerBound turns "prediction-interval lower bound ≥ Pmin" into the
// current bound of one cell. Fit is the calibration with its covariance
// and residual SD; t the Student t quantile at its level.
type lowerBound struct {
	fit PenetrationFit
	t   float64
}

func newLowerBound(f PenetrationFit, level float64) (*lowerBound, error) {
	if err := checkLevel(level); err != nil {
		return nil, err
	}
	if f.DoF < 1 || !(f.ResidualSDLn >= 0) {
		return nil, fmt.Errorf("%w: a lower bound needs the fit's residual SD and degrees of freedom", ErrInvalidFit)
	}
	return &lowerBound{fit: f, t: tQuantile(level, f.DoF)}, nil
}

// halfWidth is t·√(σ̂² + gᵀ·Cov·g) in ln(mm) at current i, travel speed s
// and voltage v: how far below the median the lower bound lies.
func (lb *lowerBound) halfWidth(i, s, v float64) float64 {
	g := []float64{1}
	if lb.fit.Model == ModelJacksonFree {
		g = []float64{1, math.Log(i), math.Log(s), math.Log(v)}
	}
	q, err := quadForm(lb.fit.Cov, g)
	if err != nil {
		return math.Inf(1)
	}
	return lb.t * math.Sqrt(lb.fit.ResidualSDLn*lb.fit.ResidualSDLn+q)
}

// medianMin is the median penetration (mm) the cell must reach so that the
// lower bound reaches minMM: minMM·e^h. For the fixed-exponent fit h does not
// depend on the setting; for the free fit it does through g, so the current
// bound is found by fixed-point iteration I ← bound(minMM·e^h(I)), which
// converges because h changes slowly with ln I; current(x) is the median
// bound of the cell for a minimum x.
func (lb *lowerBound) medianMin(minMM, s, v float64, current func(float64) float64) float64 {
	target := minMM * math.Exp(lb.halfWidth(1, s, v))
	if lb.fit.Model != ModelJacksonFree {
		return target
	}
	i := current(minMM)
	for range 50 {
		target = minMM * math.Exp(lb.halfWidth(i, s, v))
		next := current(target)
		if math.Abs(next-i) <= 1e-12*i {
			break
		}
		i = next
	}
	return target
}
