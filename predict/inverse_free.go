package predict

import (
	"fmt"
	"math"
)

// Closed-form inverses of a free-exponent Jackson fit (ModelJacksonFree):
//
//	ln P = c₀ + a·ln I + b·ln S + c·ln V
//
// with P in mm, I in A, S in mm/s and V in V. Each solves the median
// penetration exp(η̂) of PenetrationFit.Predict for one quantity in log
// space, e.g. ln I = (ln P − c₀ − b·ln S − c·ln V)/a; none iterates.

// minSolveExponent is the smallest |exponent| the inverses divide by. Below
// it the quantity has, in the fit, no usable effect on penetration: a 1 %
// change in penetration would need a factor e^(0.01/1e-6) in the quantity.
const minSolveExponent = 1e-6

// freeCoef returns c₀, a, b, c of a free-exponent fit, or ErrInvalidFit.
func (f PenetrationFit) freeCoef() (c0, a, b, c float64, err error) {
	if f.Model != ModelJacksonFree {
		return 0, 0, 0, 0, fmt.Errorf("%w: model %q has the published exponents; use the Jackson K inverses", ErrInvalidFit, f.Model)
	}
	if len(f.Coef) != 4 {
		return 0, 0, 0, 0, fmt.Errorf("%w: %s with %d coefficients, want 4", ErrInvalidFit, f.Model, len(f.Coef))
	}
	for i, v := range f.Coef {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return 0, 0, 0, 0, fmt.Errorf("%w: %s coefficient %d is %g", ErrInvalidFit, f.Model, i, v)
		}
	}
	return f.Coef[0], f.Coef[1], f.Coef[2], f.Coef[3], nil
}

// solvableExponent returns an *InputError naming the fit's exponent of the
// quantity when it is too close to zero to solve for that quantity.
func solvableExponent(quantity string, e float64) error {
	if math.Abs(e) < minSolveExponent {
		return &InputError{Field: "jackson_free " + quantity + " exponent", Value: e,
			Reason: "the active fit's " + quantity + " exponent is about zero: " + quantity + " does not change its penetration, so no " + quantity + " gives the target"}
	}
	return nil
}

// solvedValue turns ln x into x, refusing an overflow or underflow as an
// *InputError on the target penetration.
func solvedValue(quantity string, penetrationMM, lnX float64) (float64, error) {
	x := math.Exp(lnX)
	if x == 0 || math.IsInf(x, 0) || math.IsNaN(x) {
		return 0, &InputError{Field: "penetration mm", Value: penetrationMM,
			Reason: "is out of reach of the fit: the " + quantity + " that gives it is not a finite positive number"}
	}
	return x, nil
}

// CurrentForPenetrationA returns the current in A at which the fit's median
// penetration is the target P (mm) at travel speed S (mm/s) and voltage V
// (V): I = exp((ln P − c₀ − b·ln S − c·ln V)/a).
func (f PenetrationFit) CurrentForPenetrationA(penetrationMM, travelSpeedMMPerS, voltageV float64) (float64, error) {
	c0, a, b, c, err := f.freeCoef()
	if err != nil {
		return 0, err
	}
	if err := mustBePositive("penetration mm", penetrationMM); err != nil {
		return 0, err
	}
	if err := checkCSV(1, travelSpeedMMPerS, voltageV); err != nil {
		return 0, err
	}
	if err := solvableExponent("current", a); err != nil {
		return 0, err
	}
	return solvedValue("current", penetrationMM, (math.Log(penetrationMM)-c0-b*math.Log(travelSpeedMMPerS)-c*math.Log(voltageV))/a)
}

// VoltageForPenetrationV returns the arc voltage in V at which the fit's
// median penetration is the target P (mm) at current I (A) and travel speed
// S (mm/s): V = exp((ln P − c₀ − a·ln I − b·ln S)/c).
func (f PenetrationFit) VoltageForPenetrationV(penetrationMM, currentA, travelSpeedMMPerS float64) (float64, error) {
	c0, a, b, c, err := f.freeCoef()
	if err != nil {
		return 0, err
	}
	if err := mustBePositive("penetration mm", penetrationMM); err != nil {
		return 0, err
	}
	if err := checkCSV(currentA, travelSpeedMMPerS, 1); err != nil {
		return 0, err
	}
	if err := solvableExponent("voltage", c); err != nil {
		return 0, err
	}
	return solvedValue("voltage", penetrationMM, (math.Log(penetrationMM)-c0-a*math.Log(currentA)-b*math.Log(travelSpeedMMPerS))/c)
}

// TravelSpeedForPenetrationMMPerS returns the travel speed in mm/s at which
// the fit's median penetration is the target P (mm) at current I (A) and
// voltage V (V): S = exp((ln P − c₀ − a·ln I − c·ln V)/b).
func (f PenetrationFit) TravelSpeedForPenetrationMMPerS(penetrationMM, currentA, voltageV float64) (float64, error) {
	c0, a, b, c, err := f.freeCoef()
	if err != nil {
		return 0, err
	}
	if err := mustBePositive("penetration mm", penetrationMM); err != nil {
		return 0, err
	}
	if err := checkCSV(currentA, 1, voltageV); err != nil {
		return 0, err
	}
	if err := solvableExponent("travel speed", b); err != nil {
		return 0, err
	}
	return solvedValue("travel speed", penetrationMM, (math.Log(penetrationMM)-c0-a*math.Log(currentA)-c*math.Log(voltageV))/b)
}

// HoldPenetrationCurrentA returns the current I₂ (A) that keeps the fit's
// median penetration unchanged when travel speed goes from S₁ to S₂ (any one
// unit) and voltage from V₁ to V₂: I₂ = I₁·(S₂/S₁)^(−b/a)·(V₂/V₁)^(−c/a).
// c₀ cancels.
func (f PenetrationFit) HoldPenetrationCurrentA(currentA, travelSpeed1, travelSpeed2, voltage1V, voltage2V float64) (float64, error) {
	_, a, b, c, err := f.freeCoef()
	if err != nil {
		return 0, err
	}
	if err := holdInputs(currentA, travelSpeed1, travelSpeed2, voltage1V, voltage2V); err != nil {
		return 0, err
	}
	if err := solvableExponent("current", a); err != nil {
		return 0, err
	}
	lnRatio := -(b*math.Log(travelSpeed2/travelSpeed1) + c*math.Log(voltage2V/voltage1V)) / a
	i2 := currentA * math.Exp(lnRatio)
	if i2 == 0 || math.IsInf(i2, 0) {
		return 0, &InputError{Field: "current A", Value: currentA,
			Reason: "cannot be held: the current that keeps penetration is not a finite positive number"}
	}
	return i2, nil
}
