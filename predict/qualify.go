package predict

import (
	"fmt"
	"math"
)

// Qualified ranges: how far a production weld or a coupon may stray from
// the values welded on the qualification record(s) (PQR) that support its
// procedure before it is outside what was qualified. A rule set says, per
// essential variable, how the range follows from the PQR value; the rules
// are data (see RuleSet), this file only gives them meaning.

// Variable names an essential variable by its stored field name, unit
// included (current_a, travel_speed_mm_s...).
type Variable string

// Variables a rule can name. Numeric ones are in the stored metric unit;
// heat_input_j_mm is computed as arc energy V·I/S (J/mm, no efficiency
// factor) from the record's voltage, current and travel speed.
const (
	VarCurrent       Variable = "current_a"
	VarVoltage       Variable = "voltage_v"
	VarTravelSpeed   Variable = "travel_speed_mm_s"
	VarWireFeedSpeed Variable = "wire_feed_speed_m_min"
	VarCTWD          Variable = "ctwd_mm"
	VarWireDiameter  Variable = "wire_diameter_mm"
	VarThickness     Variable = "thickness_mm"
	VarPreheat       Variable = "preheat_c"
	VarInterpass     Variable = "interpass_c"
	VarHeatInput     Variable = "heat_input_j_mm"
	VarShieldingGas  Variable = "shielding_gas"
	VarTransferMode  Variable = "transfer_mode"
	VarPolarity      Variable = "polarity"
	VarFiller        Variable = "filler_classification"
	VarPosition      Variable = "position"
	VarBaseMetal     Variable = "base_metal_group"
)

// variableInfo describes one variable: its unit ("" for a text variable)
// and whether ratios of it mean anything (not for °C, an interval scale).
type variableInfo struct {
	name    Variable
	unit    string
	numeric bool
	ratio   bool
}

// variables lists every known variable; the index is its ordinal.
var variables = []variableInfo{
	numeric(VarCurrent, true),
	numeric(VarVoltage, true),
	numeric(VarTravelSpeed, true),
	numeric(VarWireFeedSpeed, true),
	numeric(VarCTWD, true),
	numeric(VarWireDiameter, true),
	numeric(VarThickness, true),
	numeric(VarPreheat, false),
	numeric(VarInterpass, false),
	numeric(VarHeatInput, true),
	{VarShieldingGas, "", false, false},
	{VarTransferMode, "", false, false},
	{VarPolarity, "", false, false},
	{VarFiller, "", false, false},
	{VarPosition, "", false, false},
	{VarBaseMetal, "", false, false},
}

// numeric describes a numeric variable: a registered quantity, in its stored unit.
func numeric(v Variable, ratio bool) variableInfo {
	return variableInfo{v, MustQuantity(string(v)).Unit(), true, ratio}
}

// variableOrdinal numbers the variables for the uint32 bit sets of an
// observation, so there may be at most 32.
var variableOrdinal = func() map[Variable]int {
	if len(variables) > 32 {
		panic("predict: more than 32 qualified-range variables do not fit an observation's bit sets")
	}
	m := make(map[Variable]int, len(variables))
	for i, v := range variables {
		m[v.name] = i
	}
	return m
}()

// info returns the variable's description, or false for an unknown name.
func (v Variable) info() (variableInfo, int, bool) {
	i, ok := variableOrdinal[v]
	if !ok {
		return variableInfo{}, -1, false
	}
	return variables[i], i, true
}

// Unit returns the stored unit of a numeric variable ("" for text or unknown).
func (v Variable) Unit() string {
	vi, _, _ := v.info()
	return vi.unit
}

// Numeric reports whether the variable holds a number.
func (v Variable) Numeric() bool {
	vi, _, _ := v.info()
	return vi.numeric
}

// KnownVariables returns every variable a rule may name, in a fixed order.
func KnownVariables() []Variable {
	out := make([]Variable, len(variables))
	for i, v := range variables {
		out[i] = v.name
	}
	return out
}

// Band is a closed interval [Min, Max] in a variable's unit; a missing side
// is ±Inf (unbounded), written in JSON as an absent field.
type Band struct {
	Min float64
	Max float64
}

// edgeTol is the relative round-off allowed at a band edge: a value within
// one part in 10⁹ of an edge counts as on it (inclusive edges survive unit
// conversions such as 0.5 in → 12.7 mm).
const edgeTol = 1e-9

// slack returns the absolute round-off allowance at an edge x.
func slack(x float64) float64 {
	if math.IsInf(x, 0) {
		return 0
	}
	return edgeTol * math.Max(math.Abs(x), 1)
}

// Contains reports whether x lies in the band, edges included.
func (b Band) Contains(x float64) bool {
	return x >= b.Min-slack(b.Min) && x <= b.Max+slack(b.Max)
}

// within reports whether the band lies inside outer (round-off allowed).
func (b Band) within(outer Band) bool {
	return b.Min >= outer.Min-slack(outer.Min) && b.Max <= outer.Max+slack(outer.Max)
}

// String shows the band with six significant digits, e.g. "[162, 198]"; the
// exact edges are in the flag's min and max fields.
func (b Band) String() string {
	lo, hi := "-inf", "+inf"
	if !math.IsInf(b.Min, -1) {
		lo = fmt.Sprintf("%.6g", b.Min)
	}
	if !math.IsInf(b.Max, 1) {
		hi = fmt.Sprintf("%.6g", b.Max)
	}
	return "[" + lo + ", " + hi + "]"
}

// unbounded is the band that admits every value.
var unbounded = Band{Min: math.Inf(-1), Max: math.Inf(1)}

// VariableSpelling is a name by which a request may give a variable: the
// stored name itself or an inch-pound (or other) spelling, with the
// conversion of a value and of a difference (a band width) into the stored
// unit. For temperatures the two differ: 25 °F of difference is 25·5/9 °C,
// while a reading of 25 °F is −3.9 °C.
type VariableSpelling struct {
	Variable Variable
	Value    func(float64) float64
	Delta    func(float64) float64
}

// ParseVariable resolves a variable name as a request gives it: a stored
// name (current_a, ctwd_mm...) or an accepted alternate spelling (ctwd_in,
// preheat_f, heat_input_kj_in...). It reports false for an unknown name.
func ParseVariable(name string) (VariableSpelling, bool) {
	if q, ok := LookupQuantity(name); ok {
		if _, _, known := Variable(q.Name).info(); known {
			s, _ := q.Spelling(name)
			return VariableSpelling{Variable(q.Name), s.ToStored, s.DifferenceToStored}, true
		}
	}
	if _, _, ok := Variable(name).info(); ok {
		return VariableSpelling{Variable(name), identity, identity}, true
	}
	return VariableSpelling{}, false
}
