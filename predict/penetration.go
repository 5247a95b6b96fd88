package predict

import (
	"fmt"
	"math"
)

// Jackson penetration exponents: P = K·I^(4/3)·S^(−1/3)·V^(−2/3), i.e.
// P = K·(I⁴/(S·V²))^(1/3) (Jackson power law, from memory).
const (
	JacksonCurrentExponent = 4.0 / 3
	JacksonTravelExponent  = -1.0 / 3
	JacksonVoltageExponent = -2.0 / 3
)

// JacksonUnits names the unit system a Jackson coefficient K belongs to.
type JacksonUnits string

// Unit systems of a Jackson coefficient.
const (
	// JacksonUnitsMetric: P in mm, I in A, S in mm/s, V in V.
	JacksonUnitsMetric JacksonUnits = "metric"
	// JacksonUnitsInch: P in in, I in A, S in in/min, V in V.
	JacksonUnitsInch JacksonUnits = "inch"
)

// jacksonInchToMetric is the exact factor K_metric/K_inch = 25.4·(25.4/60)^(1/3):
// P_mm = 25.4·P_in and S_in/min = S_mm/s·60/25.4.
var jacksonInchToMetric = MMPerInch * math.Cbrt(MMPerInch/SecondsPerMinute)

// JacksonK is the Jackson penetration coefficient together with the units it
// was fitted in; it depends on process, wire, gas and joint.
type JacksonK struct {
	Value float64
	Units JacksonUnits
}

// Validate reports whether k has a positive finite value and known units.
func (k JacksonK) Validate() error {
	if err := mustBePositive("jackson K", k.Value); err != nil {
		return err
	}
	if k.Units != JacksonUnitsMetric && k.Units != JacksonUnitsInch {
		return &InputError{Field: "jackson K units", Value: k.Value,
			Reason: fmt.Sprintf("unknown unit system %q, want %q or %q", k.Units, JacksonUnitsMetric, JacksonUnitsInch)}
	}
	return nil
}

// Metric returns k expressed in JacksonUnitsMetric (K_metric = 25.4·K_inch·(25.4/60)^(1/3)).
func (k JacksonK) Metric() (JacksonK, error) {
	if err := k.Validate(); err != nil {
		return JacksonK{}, err
	}
	if k.Units == JacksonUnitsInch {
		return JacksonK{Value: k.Value * jacksonInchToMetric, Units: JacksonUnitsMetric}, nil
	}
	return k, nil
}

// Inch returns k expressed in JacksonUnitsInch.
func (k JacksonK) Inch() (JacksonK, error) {
	if err := k.Validate(); err != nil {
		return JacksonK{}, err
	}
	if k.Units == JacksonUnitsMetric {
		return JacksonK{Value: k.Value / jacksonInchToMetric, Units: JacksonUnitsInch}, nil
	}
	return k, nil
}

// metricK validates k and returns its metric value.
func metricK(k JacksonK) (float64, error) {
	m, err := k.Metric()
	return m.Value, err
}

// jacksonGroup is (I⁴/(S·V²))^(1/3) written to keep the cube root of a
// moderate number: I·(I/(S·V²))^(1/3).
func jacksonGroup(currentA, travel, voltageV float64) float64 {
	return currentA * math.Cbrt(currentA/(travel*voltageV*voltageV))
}

// PenetrationMM predicts the penetration depth in mm with the Jackson power
// law P = K·(I⁴/(S·V²))^(1/3), I current in A, S travel speed in mm/s,
// V arc voltage in V. k may be in either unit system; it is converted.
func PenetrationMM(k JacksonK, currentA, travelSpeedMMPerS, voltageV float64) (float64, error) {
	km, err := metricK(k)
	if err != nil {
		return 0, err
	}
	if err := checkCSV(currentA, travelSpeedMMPerS, voltageV); err != nil {
		return 0, err
	}
	return km * jacksonGroup(currentA, travelSpeedMMPerS, voltageV), nil
}

// checkCSV validates current (A), travel speed (mm/s) and voltage (V).
func checkCSV(currentA, travelSpeedMMPerS, voltageV float64) error {
	if err := mustBePositive("current A", currentA); err != nil {
		return err
	}
	if err := mustBePositive("travel speed mm/s", travelSpeedMMPerS); err != nil {
		return err
	}
	return mustBePositive("arc voltage V", voltageV)
}

// JacksonKFromWeldMM returns the metric Jackson coefficient that reproduces a
// measured penetration (mm) at the given current (A), travel speed (mm/s)
// and voltage (V): K = P/(I⁴/(S·V²))^(1/3). One weld only; no averaging.
func JacksonKFromWeldMM(penetrationMM, currentA, travelSpeedMMPerS, voltageV float64) (JacksonK, error) {
	if err := mustBePositive("penetration mm", penetrationMM); err != nil {
		return JacksonK{}, err
	}
	if err := checkCSV(currentA, travelSpeedMMPerS, voltageV); err != nil {
		return JacksonK{}, err
	}
	return JacksonK{Value: penetrationMM / jacksonGroup(currentA, travelSpeedMMPerS, voltageV), Units: JacksonUnitsMetric}, nil
}
