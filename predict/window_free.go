package predict

import "math"

// freePenetration is a penetration target's free-exponent fit reduced to
// its coefficients: ln P = c0 + a·ln I + b·ln S + c·ln V (mm, A, mm/s, V).
type freePenetration struct{ c0, a, b, c float64 }

// maxWindowLn bounds ln I of a fit's current bound so that exp stays a
// finite positive number (e^±700 ≈ 10^±304): a bound that far out empties
// the cell, or leaves it to the current range, as the exact one would.
const maxWindowLn = 700

// newFreePenetration checks that f is a free-exponent fit whose current
// exponent can be solved for (|a| ≥ minSolveExponent; otherwise current
// does not change the fit's penetration and no current bound exists).
func newFreePenetration(f PenetrationFit) (freePenetration, error) {
	c0, a, b, c, err := f.freeCoef()
	if err != nil {
		return freePenetration{}, err
	}
	if err := solvableExponent("current", a); err != nil {
		return freePenetration{}, err
	}
	return freePenetration{c0, a, b, c}, nil
}

// bound turns median penetration ≥ minMM at travel speed s and voltage v
// into a current bound on iv: ln I ≥ (ln Pmin − c0 − b·ln S − c·ln V)/a
// when a > 0; when a < 0 penetration falls as current rises, so the same
// value is an upper bound (still named LimitPenetrationMin).
func (fp freePenetration) bound(iv *LimitedInterval, minMM, s, v float64) {
	i := fp.current(minMM, s, v)
	if fp.a > 0 {
		iv.raise(i, LimitPenetrationMin)
	} else {
		iv.lower(i, LimitPenetrationMin)
	}
}

// medianMM is the fit's median penetration in mm at current i (A), travel
// speed s (mm/s) and voltage v (V), summed as PenetrationFit.Predict sums it.
func (fp freePenetration) medianMM(i, s, v float64) float64 {
	eta := fp.c0
	eta += fp.a*math.Log(i) + fp.b*math.Log(s) + fp.c*math.Log(v)
	return math.Exp(eta)
}

// current is the current (A) at which the fit's median is minMM at travel
// speed s and voltage v: exp((ln Pmin − c0 − b·ln S − c·ln V)/a), clamped
// so that it stays a finite positive number.
func (fp freePenetration) current(minMM, s, v float64) float64 {
	ln := (math.Log(minMM) - fp.c0 - fp.b*math.Log(s) - fp.c*math.Log(v)) / fp.a
	return math.Exp(math.Max(-maxWindowLn, math.Min(maxWindowLn, ln)))
}
