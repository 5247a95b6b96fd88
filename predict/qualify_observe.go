package predict

import "strings"

// Observation is what one record (a PQR, a coupon, a production record)
// says about the variables it carries: a number or a text per variable, or
// "carried but not given" (a missing value the record kind could have had).
// Variables the record kind does not carry at all are out of its scope and
// never checked. The zero Observation carries nothing.
type Observation struct {
	num     [32]float64
	txt     [32]string
	given   uint32 // bit i: variable i has a value
	carried uint32 // bit i: the record kind carries variable i
}

// SetNumber records a numeric value (in the variable's stored unit).
func (o *Observation) SetNumber(v Variable, x float64) {
	if _, i, ok := v.info(); ok {
		o.num[i] = x
		o.given |= 1 << i
		o.carried |= 1 << i
	}
}

// SetOptional records *x, or marks the variable missing when x is nil.
func (o *Observation) SetOptional(v Variable, x *float64) {
	if x == nil {
		o.SetMissing(v)
		return
	}
	o.SetNumber(v, *x)
}

// SetText records a text value; an empty or blank text counts as missing.
func (o *Observation) SetText(v Variable, s string) {
	_, i, ok := v.info()
	if !ok {
		return
	}
	o.carried |= 1 << i
	if strings.TrimSpace(s) == "" {
		o.given &^= 1 << i
		return
	}
	o.txt[i] = s
	o.given |= 1 << i
}

// SetMissing marks a variable the record kind carries but this record lacks.
func (o *Observation) SetMissing(v Variable) {
	if _, i, ok := v.info(); ok {
		o.carried |= 1 << i
		o.given &^= 1 << i
	}
}

// Number returns the variable's value and whether it is given. Heat input
// is computed as arc energy V·I/S when voltage, current and travel speed are.
func (o *Observation) Number(v Variable) (float64, bool) {
	if v == VarHeatInput {
		return o.heatInput()
	}
	_, i, ok := v.info()
	if !ok || o.given&(1<<i) == 0 {
		return 0, false
	}
	return o.num[i], true
}

// Text returns the variable's text value and whether it is given.
func (o *Observation) Text(v Variable) (string, bool) {
	_, i, ok := v.info()
	if !ok || o.given&(1<<i) == 0 {
		return "", false
	}
	return o.txt[i], true
}

// Carries reports whether the record kind carries the variable. Heat input
// is carried when voltage, current and travel speed are.
func (o *Observation) Carries(v Variable) bool {
	if v == VarHeatInput {
		return o.Carries(VarVoltage) && o.Carries(VarCurrent) && o.Carries(VarTravelSpeed)
	}
	_, i, ok := v.info()
	return ok && o.carried&(1<<i) != 0
}

// heatInput returns arc energy V·I/S in J/mm (V in V, I in A, S in mm/s).
func (o *Observation) heatInput() (float64, bool) {
	v, okV := o.Number(VarVoltage)
	i, okI := o.Number(VarCurrent)
	s, okS := o.Number(VarTravelSpeed)
	if !okV || !okI || !okS || !(v > 0) || !(i > 0) || !(s > 0) {
		return 0, false
	}
	return v * i / s, true
}

// normText folds a text value for a same rule: trimmed, case-insensitive,
// spaces ignored ("Ar-25CO2" = "ar-25 co2").
func normText(s string) string {
	return strings.ToLower(strings.Join(strings.Fields(s), ""))
}
