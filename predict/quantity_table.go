package predict

import "math"

// Measures: the stored spelling first, then the other spellings a request
// may use, each with its exact conversion (units.go).
var (
	lengthMM = Measure{Stored: Spelling{"_mm", "mm", identity, identity},
		Others: []Spelling{{"_in", "in", InchToMM, MMToInch}}}
	areaMM2 = Measure{Stored: Spelling{"_mm2", "mm²", identity, identity},
		Others: []Spelling{{"_in2", "in²", func(a float64) float64 { return a * MMPerInch * MMPerInch },
			func(a float64) float64 { return a / MMPerInch / MMPerInch }}}}
	travelSpeed = Measure{Stored: Spelling{"_mm_s", "mm/s", identity, identity},
		Others: []Spelling{{"_mm_min", "mm/min", MMPerMinToMMPerS, MMPerSToMMPerMin},
			{"_in_min", "in/min", InPerMinToMMPerS, MMPerSToInPerMin}}}
	wireFeedSpeed = Measure{Stored: Spelling{"_m_min", "m/min", identity, identity},
		Others: []Spelling{{"_in_min", "in/min", InPerMinToMPerMin, MPerMinToInPerMin}}}
	temperature = Measure{Stored: Spelling{"_c", "°C", identity, identity},
		Others: []Spelling{{"_f", "°F", FahrenheitToCelsius, CelsiusToFahrenheit}}}
	massRate = Measure{Stored: Spelling{"_kg_h", "kg/h", identity, identity},
		Others: []Spelling{{"_lb_h", "lb/h", LbPerHToKgPerH, KgPerHToLbPerH}}}
	heatInput = Measure{Stored: Spelling{"_j_mm", "J/mm", identity, identity},
		Others: []Spelling{{"_kj_mm", "kJ/mm", KJPerMMToJPerMM, JPerMMToKJPerMM},
			{"_j_in", "J/in", JPerInToJPerMM, JPerMMToJPerIn},
			{"_kj_in", "kJ/in", func(v float64) float64 { return KJPerMMToJPerMM(KJPerInToKJPerMM(v)) },
				func(v float64) float64 { return KJPerMMToKJPerIn(JPerMMToKJPerMM(v)) }}}}
	// Lesnewich coefficients: α in kg/(h·A), β in kg/(h·A²·mm).
	alphaPerA = Measure{Stored: Spelling{"_kg_h_a", "kg/(h·A)", identity, identity},
		Others: []Spelling{{"_lb_h_a", "lb/(h·A)", LbPerHToKgPerH, KgPerHToLbPerH}}}
	betaPerA2 = Measure{Stored: Spelling{"_kg_h_a2_mm", "kg/(h·A²·mm)", identity, identity},
		Others: []Spelling{{"_lb_h_a2_in", "lb/(h·A²·in)", func(v float64) float64 { return LbPerHToKgPerH(v) / MMPerInch },
			func(v float64) float64 { return KgPerHToLbPerH(v) * MMPerInch }}}}
	amperes  = Measure{Stored: Spelling{"_a", "A", identity, identity}}
	volts    = Measure{Stored: Spelling{"_v", "V", identity, identity}}
	stress   = Measure{Stored: Spelling{"_mpa", "MPa", identity, identity}}
	plain    = Measure{Stored: Spelling{"", "", identity, identity}} // a ratio or a count
	infinity = math.Inf(1)
)

// Plausible bounds come from the domain primer's table (outside them a
// value is a typing error, not a weld); the others are stated beside them.
var (
	current      = Quantity{Measure: amperes, Min: 10, Max: 1000}
	voltage      = Quantity{Measure: volts, Min: 5, Max: 60}
	travel       = Quantity{Measure: travelSpeed, Min: 0.5, Max: 30}
	wireFeed     = Quantity{Measure: wireFeedSpeed, Min: 0.5, Max: 30}
	thickness    = Quantity{Measure: lengthMM, Min: 0.5, Max: 300}
	penetration  = Quantity{Measure: lengthMM, Min: 0, Max: 50}
	bead         = Quantity{Measure: lengthMM, Min: 0, MinOpen: true, Max: 100} // a section's sizes
	fraction     = Quantity{Measure: plain, Min: 0, MinOpen: true, Max: 1}
	processTemp  = Quantity{Measure: temperature, Min: -20, Max: 350}
	gridSteps    = Quantity{Measure: plain, Min: 0, Max: 25, Integer: true} // window grid points per axis
	rateKgH      = Quantity{Measure: massRate, Min: 0, MinOpen: true, Max: 100}
	positiveHeat = Quantity{Measure: heatInput, Min: 0, MinOpen: true, Max: infinity}
)

// named returns q registered under base with a description.
func named(base string, q Quantity, description string) Quantity {
	q.Base, q.Name, q.Description = base, base+q.Measure.Stored.Suffix, description
	return q
}

// quantities is the registry: every number of the API, once.
var quantities = []Quantity{
	named("current", current, "Welding current"),
	named("voltage", voltage, "Arc voltage"),
	named("new_voltage", voltage, "Arc voltage after the change"),
	named("travel_speed", travel, "Travel speed"),
	named("new_travel_speed", travel, "Travel speed after the change"),
	named("wire_feed_speed", wireFeed, "Wire feed speed"),
	named("wire_diameter", Quantity{Measure: lengthMM, Min: 0.6, Max: 4}, "Wire diameter"),
	named("ctwd", Quantity{Measure: lengthMM, Min: 3, Max: 50}, "Contact-tip-to-work distance"),
	named("thickness", thickness, "Base-metal thickness"),
	named("thickness_min", thickness, "Thinnest base metal the procedure covers"),
	named("thickness_max", thickness, "Thickest base metal the procedure covers"),
	named("preheat", processTemp, "Preheat temperature"),
	named("interpass", processTemp, "Interpass temperature"),
	named("pass_number", Quantity{Measure: plain, Min: 1, Max: 500, Integer: true}, "Pass number, counted from the root"),
	// A section's penetration may be zero (no fusion into the base metal is a finding).
	named("penetration", penetration, "Penetration below the base-metal surface"),
	named("min_penetration", Quantity{Measure: lengthMM, Min: 0, MinOpen: true, Max: 50}, "Required minimum penetration"),
	named("bead_width", bead, "Bead width"),
	// Negative reinforcement is underfill.
	named("reinforcement", Quantity{Measure: lengthMM, Min: -10, Max: 30}, "Reinforcement above the surface (negative: underfill)"),
	named("leg1", bead, "Fillet leg 1"),
	named("leg2", bead, "Fillet leg 2"),
	named("throat", bead, "Fillet throat"),
	named("fused_area", Quantity{Measure: areaMM2, Min: 0, MinOpen: true, Max: 10000}, "Fused area of the section"),
	named("tensile_strength", Quantity{Measure: stress, Min: 0, MinOpen: true, Max: 2000}, "Tensile strength"),
	// Model inputs.
	named("arc_length", Quantity{Measure: lengthMM, Min: 0, MinOpen: true, Max: 50}, "Arc length (CTWD minus electrode extension)"),
	named("extension", Quantity{Measure: lengthMM, Min: 0, MinOpen: true, Max: 50}, "Electrode extension (stick-out)"),
	named("melting_rate", rateKgH, "Wire melting rate"),
	named("deposition_rate", rateKgH, "Deposition rate"),
	named("deposition_efficiency", fraction, "Deposition efficiency (deposited / melted mass)"),
	named("thermal_efficiency", fraction, "Arc thermal efficiency k"),
	named("waveform_power_ratio", Quantity{Measure: plain, Min: 0, MinOpen: true, Max: 10},
		"Measured average instantaneous power / (mean V × mean I)"),
	named("max_heat_input", positiveHeat, "Largest heat input allowed"),
	named("heat_input", positiveHeat, "Heat input as arc energy V·I/S"),
	named("level", Quantity{Measure: plain, Min: 0, MinOpen: true, Max: 1, MaxOpen: true}, "Confidence level of intervals"),
	named("alpha", Quantity{Measure: alphaPerA, Min: 0, Max: infinity}, "Lesnewich α, the arc-heating term"),
	named("beta", Quantity{Measure: betaPerA2, Min: 0, Max: infinity}, "Lesnewich β, the resistive-heating term"),
	named("voltage_steps", gridSteps, "Grid points along voltage"),
	named("travel_speed_steps", gridSteps, "Grid points along travel speed"),
	named("extension_steps", gridSteps, "Grid points along electrode extension"),
}

// enums lists every enumerated word of the records.
var enums = []Enum{
	{"process", []string{string(ProcessGMAW), string(ProcessFCAW), string(ProcessGTAW), string(ProcessSMAW), string(ProcessSAW)}, "Arc welding process", false},
	{"polarity", []string{"DCEP", "DCEN", "AC"}, "Electrode polarity", false},
	{"transfer_mode", []string{"short_circuit", "globular", "spray", "pulsed_spray"}, "Metal transfer mode (may be left empty)", true},
	{"joint_type", []string{"bead_on_plate", "butt", "fillet", "lap", "corner", "edge"}, "Joint type", false},
	{"status", []string{"draft", "qualified", "superseded"}, "Procedure status", false},
	{"visual_result", testResults, "Visual examination result", false},
	{"bend_result", testResults, "Bend test result", false},
	{"tensile_result", testResults, "Tensile test result", false},
	{"macro_result", testResults, "Macro-etch test result", false},
	{"outcome", []string{"pending", "pass", "fail"}, "Qualification outcome", false},
	{"acceptance", []string{"accept", "reject"}, "Section accepted or rejected", false},
	{"model", []string{"jackson_fixed", "jackson_free", "lesnewich"}, "Calibrated model", false},
}

var testResults = []string{"pass", "fail", "not_tested"}
