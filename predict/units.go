package predict

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// Exact conversion factors. The international inch (25.4 mm) and pound
// (0.45359237 kg) are the 1959 definitions listed in NIST SP 811.
const (
	MMPerInch          = 25.4
	KgPerPound         = 0.45359237
	SecondsPerMinute   = 60.0
	MMPerMeter         = 1000.0
	JoulesPerKilojoule = 1000.0
)

// InchToMM converts a length in inches to millimetres.
func InchToMM(in float64) float64 { return in * MMPerInch }

// MMToInch converts a length in millimetres to inches.
func MMToInch(mm float64) float64 { return mm / MMPerInch }

// InPerMinToMMPerS converts a speed in in/min (ipm) to mm/s.
func InPerMinToMMPerS(ipm float64) float64 { return ipm * MMPerInch / SecondsPerMinute }

// MMPerSToInPerMin converts a speed in mm/s to in/min.
func MMPerSToInPerMin(mmps float64) float64 { return mmps * SecondsPerMinute / MMPerInch }

// InPerMinToMPerMin converts a wire feed speed in in/min (ipm) to m/min.
func InPerMinToMPerMin(ipm float64) float64 { return ipm * MMPerInch / MMPerMeter }

// MPerMinToInPerMin converts a wire feed speed in m/min to in/min.
func MPerMinToInPerMin(mpm float64) float64 { return mpm * MMPerMeter / MMPerInch }

// MPerMinToMMPerS converts a speed in m/min to mm/s.
func MPerMinToMMPerS(mpm float64) float64 { return mpm * MMPerMeter / SecondsPerMinute }

// MMPerSToMPerMin converts a speed in mm/s to m/min.
func MMPerSToMPerMin(mmps float64) float64 { return mmps * SecondsPerMinute / MMPerMeter }

// MMPerMinToMMPerS converts a speed in mm/min to mm/s.
func MMPerMinToMMPerS(mmpm float64) float64 { return mmpm / SecondsPerMinute }

// MMPerSToMMPerMin converts a speed in mm/s to mm/min.
func MMPerSToMMPerMin(mmps float64) float64 { return mmps * SecondsPerMinute }

// CMPerMinToMMPerS converts a speed in cm/min to mm/s.
func CMPerMinToMMPerS(cmpm float64) float64 { return cmpm * 10 / SecondsPerMinute }

// MMPerSToCMPerMin converts a speed in mm/s to cm/min.
func MMPerSToCMPerMin(mmps float64) float64 { return mmps * SecondsPerMinute / 10 }

// FahrenheitToCelsius converts °F to °C: t_C = (t_F − 32)·5/9.
func FahrenheitToCelsius(f float64) float64 { return (f - 32) * 5 / 9 }

// CelsiusToFahrenheit converts °C to °F: t_F = t_C·9/5 + 32.
func CelsiusToFahrenheit(c float64) float64 { return c*9/5 + 32 }

// PoundToKg converts a mass in pounds (avoirdupois) to kilograms.
func PoundToKg(lb float64) float64 { return lb * KgPerPound }

// KgToPound converts a mass in kilograms to pounds.
func KgToPound(kg float64) float64 { return kg / KgPerPound }

// LbPerHToKgPerH converts a mass rate in lb/h to kg/h.
func LbPerHToKgPerH(lbph float64) float64 { return lbph * KgPerPound }

// KgPerHToLbPerH converts a mass rate in kg/h to lb/h.
func KgPerHToLbPerH(kgph float64) float64 { return kgph / KgPerPound }

// JPerInToJPerMM converts a heat input in J/in to J/mm.
func JPerInToJPerMM(jpi float64) float64 { return jpi / MMPerInch }

// JPerMMToJPerIn converts a heat input in J/mm to J/in.
func JPerMMToJPerIn(jpmm float64) float64 { return jpmm * MMPerInch }

// KJPerInToKJPerMM converts a heat input in kJ/in to kJ/mm.
func KJPerInToKJPerMM(kjpi float64) float64 { return kjpi / MMPerInch }

// KJPerMMToKJPerIn converts a heat input in kJ/mm to kJ/in.
func KJPerMMToKJPerIn(kjpmm float64) float64 { return kjpmm * MMPerInch }

// KJPerMMToJPerMM converts a heat input in kJ/mm to J/mm.
func KJPerMMToJPerMM(kjpmm float64) float64 { return kjpmm * JoulesPerKilojoule }

// JPerMMToKJPerMM converts a heat input in J/mm to kJ/mm.
func JPerMMToKJPerMM(jpmm float64) float64 { return jpmm / JoulesPerKilojoule }

// GPerCM3ToKgPerMM3 converts a density in g/cm³ to kg/mm³ (1 g/cm³ = 1e-6 kg/mm³).
func GPerCM3ToKgPerMM3(gpcc float64) float64 { return gpcc * 1e-6 }

// KgPerMM3ToGPerCM3 converts a density in kg/mm³ to g/cm³.
func KgPerMM3ToGPerCM3(kgpmm3 float64) float64 { return kgpmm3 * 1e6 }

// LbPerIn3ToKgPerMM3 converts a density in lb/in³ to kg/mm³.
func LbPerIn3ToKgPerMM3(lbpin3 float64) float64 {
	return lbpin3 * KgPerPound / (MMPerInch * MMPerInch * MMPerInch)
}

// KgPerMM3ToLbPerIn3 converts a density in kg/mm³ to lb/in³.
func KgPerMM3ToLbPerIn3(kgpmm3 float64) float64 {
	return kgpmm3 * (MMPerInch * MMPerInch * MMPerInch) / KgPerPound
}

// QuantityKind names a kind of quantity that crosses the API boundary.
type QuantityKind string

// Quantity kinds accepted by ParseUnit, with their internal units.
const (
	KindLength        QuantityKind = "length"          // mm
	KindTravelSpeed   QuantityKind = "travel_speed"    // mm/s
	KindWireFeedSpeed QuantityKind = "wire_feed_speed" // m/min
	KindTemperature   QuantityKind = "temperature"     // °C
	KindMassRate      QuantityKind = "mass_rate"       // kg/h
	KindHeatInput     QuantityKind = "heat_input"      // J/mm
)

// ErrUnknownUnit is returned by ParseUnit for a unit name it does not know.
var ErrUnknownUnit = errors.New("predict: unknown unit")

// ErrWrongUnitKind is returned by ParseUnit when a known unit does not
// measure the requested kind of quantity (e.g. "kg/h" for a length).
var ErrWrongUnitKind = errors.New("predict: unit does not fit quantity")

// Unit converts values of one boundary unit to and from the internal unit
// of its quantity kind. Obtain one from ParseUnit.
type Unit struct {
	Name     string       // unit name as given at the boundary, e.g. "in/min"
	Kind     QuantityKind // quantity kind it was parsed for
	Internal string       // internal unit name, e.g. "mm/s"
	to, from func(float64) float64
}

// ToInternal converts v from u.Name to the internal unit. The zero Unit
// (not from ParseUnit) returns NaN rather than a wrong number.
func (u Unit) ToInternal(v float64) float64 {
	if u.to == nil {
		return math.NaN()
	}
	return u.to(v)
}

// FromInternal converts v from the internal unit to u.Name (NaN for the zero Unit).
func (u Unit) FromInternal(v float64) float64 {
	if u.from == nil {
		return math.NaN()
	}
	return u.from(v)
}

type unitPair struct{ to, from func(float64) float64 }

func identity(v float64) float64 { return v }

func scale(k float64) unitPair {
	return unitPair{func(v float64) float64 { return v * k }, func(v float64) float64 { return v / k }}
}

// internalUnits names the internal unit of each quantity kind.
var internalUnits = map[QuantityKind]string{
	KindLength: "mm", KindTravelSpeed: "mm/s", KindWireFeedSpeed: "m/min",
	KindTemperature: "C", KindMassRate: "kg/h", KindHeatInput: "J/mm",
}

// boundaryUnits maps unit name → kind → conversion into the internal unit.
var boundaryUnits = map[string]map[QuantityKind]unitPair{
	"mm": {KindLength: {identity, identity}},
	"in": {KindLength: {InchToMM, MMToInch}},
	"mm/s": {
		KindTravelSpeed:   {identity, identity},
		KindWireFeedSpeed: {MMPerSToMPerMin, MPerMinToMMPerS},
	},
	"mm/min": {
		KindTravelSpeed:   {MMPerMinToMMPerS, MMPerSToMMPerMin},
		KindWireFeedSpeed: scale(1 / MMPerMeter),
	},
	"cm/min": {
		KindTravelSpeed:   {CMPerMinToMMPerS, MMPerSToCMPerMin},
		KindWireFeedSpeed: scale(10 / MMPerMeter),
	},
	"in/min": {
		KindTravelSpeed:   {InPerMinToMMPerS, MMPerSToInPerMin},
		KindWireFeedSpeed: {InPerMinToMPerMin, MPerMinToInPerMin},
	},
	"m/min": {
		KindTravelSpeed:   {MPerMinToMMPerS, MMPerSToMPerMin},
		KindWireFeedSpeed: {identity, identity},
	},
	"C":     {KindTemperature: {identity, identity}},
	"F":     {KindTemperature: {FahrenheitToCelsius, CelsiusToFahrenheit}},
	"kg/h":  {KindMassRate: {identity, identity}},
	"lb/h":  {KindMassRate: {LbPerHToKgPerH, KgPerHToLbPerH}},
	"J/mm":  {KindHeatInput: {identity, identity}},
	"kJ/mm": {KindHeatInput: {KJPerMMToJPerMM, JPerMMToKJPerMM}},
	"J/in":  {KindHeatInput: {JPerInToJPerMM, JPerMMToJPerIn}},
	"kJ/in": {KindHeatInput: scale(JoulesPerKilojoule / MMPerInch)},
}

// unitAliases maps accepted spellings onto the names in boundaryUnits.
var unitAliases = map[string]string{"ipm": "in/min", "°C": "C", "°F": "F"}

// ParseUnit returns the conversion from the boundary unit name into the
// internal unit of kind. Names are matched exactly after trimming spaces
// ("ipm" is accepted for "in/min", "°C"/"°F" for "C"/"F"). An unknown name
// wraps ErrUnknownUnit; a known name of another kind wraps ErrWrongUnitKind.
func ParseUnit(kind QuantityKind, name string) (Unit, error) {
	internal, ok := internalUnits[kind]
	if !ok {
		return Unit{}, fmt.Errorf("predict: unknown quantity kind %q", kind)
	}
	canon := strings.TrimSpace(name)
	if a, ok := unitAliases[canon]; ok {
		canon = a
	}
	kinds, ok := boundaryUnits[canon]
	if !ok {
		return Unit{}, fmt.Errorf("%w %q for %s (internal unit %s)", ErrUnknownUnit, name, kind, internal)
	}
	p, ok := kinds[kind]
	if !ok {
		return Unit{}, fmt.Errorf("%w: %q is not a unit of %s (internal unit %s)", ErrWrongUnitKind, name, kind, internal)
	}
	return Unit{Name: canon, Kind: kind, Internal: internal, to: p.to, from: p.from}, nil
}
