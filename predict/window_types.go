package predict

import (
	"errors"
	"fmt"
)

// Limit names one limit of a parameter window.
type Limit string

// Limits a window can report as binding or closest.
const (
	LimitCurrentMin       Limit = "current_min"
	LimitCurrentMax       Limit = "current_max"
	LimitVoltageMin       Limit = "voltage_min"
	LimitVoltageMax       Limit = "voltage_max"
	LimitTravelSpeedMin   Limit = "travel_speed_min"
	LimitTravelSpeedMax   Limit = "travel_speed_max"
	LimitExtensionMin     Limit = "extension_min"
	LimitExtensionMax     Limit = "extension_max"
	LimitWireFeedSpeedMin Limit = "wire_feed_speed_min"
	LimitWireFeedSpeedMax Limit = "wire_feed_speed_max"
	LimitPenetrationMin   Limit = "penetration_min"
	LimitDepositionMin    Limit = "deposition_min"
	LimitDepositionMax    Limit = "deposition_max"
	LimitHeatInputMax     Limit = "heat_input_max"
)

// Range is a closed qualified range [Min, Max]; the unit is in the name of
// the field that holds it. Min == Max fixes the value.
type Range struct{ Min, Max float64 }

// validate checks 0 < Min ≤ Max, both finite.
func (r Range) validate(field string) error {
	if err := mustBePositive(field+" min", r.Min); err != nil {
		return err
	}
	if err := mustBePositive(field+" max", r.Max); err != nil {
		return err
	}
	if r.Min > r.Max {
		return &InputError{Field: field + " min", Value: r.Min, Reason: fmt.Sprintf("exceeds max %g", r.Max)}
	}
	return nil
}

// LimitedInterval is an exact interval [Lo, Hi] together with the limit
// that sets each end. It is empty when Lo > Hi.
type LimitedInterval struct {
	Lo, Hi           float64
	LoLimit, HiLimit Limit
}

// Empty reports whether no value lies in the interval.
func (iv LimitedInterval) Empty() bool { return iv.Lo > iv.Hi }

// raise moves Lo up to v (set by lim) if v is tighter.
func (iv *LimitedInterval) raise(v float64, lim Limit) {
	if v > iv.Lo {
		iv.Lo, iv.LoLimit = v, lim
	}
}

// lower moves Hi down to v (set by lim) if v is tighter.
func (iv *LimitedInterval) lower(v float64, lim Limit) {
	if v < iv.Hi {
		iv.Hi, iv.HiLimit = v, lim
	}
}

// PenetrationTarget asks for Jackson penetration of at least MinMM, with the
// published exponents and K, or, when Fit is set, with the median of a
// free-exponent fit (ModelJacksonFree; K is then not used).
//
// LowerBound, when set, judges on the safe side: the lower end of the
// prediction interval for one new coupon at Level, from that calibration's
// covariance and residual SD (the calibration K or Fit came from), must
// reach MinMM, not the median.
type PenetrationTarget struct {
	MinMM      float64
	K          JacksonK
	Fit        *PenetrationFit
	LowerBound *PenetrationFit
	Level      float64
}

// DepositionTarget asks for a deposition rate in [MinKgPerH, MaxKgPerH] at
// deposition efficiency Efficiency (0 < η ≤ 1). With Lesnewich set, the
// rate depends on current and extension and bounds the current; then
// WireDiameterMM and DensityKgPerMM3 (optional) also map the wire feed speed
// range onto current by mass balance. Without Lesnewich, the rate is
// WFS·(π·d²/4)·ρ·η and bounds the wire feed speed only, so WireDiameterMM
// and DensityKgPerMM3 are required.
type DepositionTarget struct {
	MinKgPerH, MaxKgPerH float64
	Efficiency           float64
	Lesnewich            *Lesnewich
	WireDiameterMM       float64
	DensityKgPerMM3      float64
}

// HeatInputTarget asks for heat input of at most MaxJPerMM computed with Rule.
type HeatInputTarget struct {
	MaxJPerMM float64
	Rule      HeatInputRule
}

// DefaultWindowSteps is the number of grid points used on an axis whose
// steps are left at zero.
const DefaultWindowSteps = 9

// maxWindowCells bounds the work one call may ask for.
const maxWindowCells = 1 << 20

// WindowInput is a parameter window problem: qualified ranges, grid sizes
// and targets (nil target = not asked for).
//
// The grid: VoltageV, TravelSpeedMMPerS and ExtensionMM are each sampled at
// Steps evenly spaced points including both ends (0 steps means
// DefaultWindowSteps; a range with Min == Max is one point, which is how a
// given travel speed is fixed). ExtensionMM is required only with a
// Lesnewich deposition target; otherwise it has no effect on any limit and
// is held at its midpoint. Current is not gridded: at each grid point every
// limit gives an exact closed-form current bound.
type WindowInput struct {
	CurrentA             Range
	VoltageV             Range
	TravelSpeedMMPerS    Range
	WireFeedSpeedMPerMin *Range
	ExtensionMM          *Range

	VoltageSteps, TravelSpeedSteps, ExtensionSteps int

	Penetration *PenetrationTarget
	Deposition  *DepositionTarget
	HeatInput   *HeatInputTarget
}

// WindowCell is one grid point: its voltage, travel speed and extension
// (0 when not used) and the exact feasible current interval there.
type WindowCell struct {
	VoltageV, TravelSpeedMMPerS, ExtensionMM float64
	CurrentA                                 LimitedInterval
}

// WindowPoint is the nominal point: the grid point and current with the
// largest normalized margin, the predictions there (0 when not asked for)
// and the limits closest to it.
type WindowPoint struct {
	CurrentA, VoltageV, TravelSpeedMMPerS, ExtensionMM float64
	WireFeedSpeedMPerMin                               float64
	PenetrationMM, DepositionKgPerH                    float64
	ArcEnergyJPerMM, HeatInputJPerMM                   float64
	// Margin is the smallest log margin to any limit (see ParameterWindow).
	Margin float64
	// Closest lists the limits at that smallest margin.
	Closest []Limit
}

// ErrInfeasible is matched (errors.Is) by *Infeasibility.
var ErrInfeasible = errors.New("predict: no feasible parameter window")

// Infeasibility explains an empty window: the conflicting limits at the grid
// point closest to feasible (smallest relative conflict ln(Lo/Hi)).
type Infeasibility struct {
	Binding []Limit
	Closest LimitedInterval // the empty current (or wire feed speed) interval
	Cell    WindowCell      // grid point of Closest; zero for a wire feed speed conflict
	Message string
}

// Error implements error so a caller may return the reason directly.
func (e *Infeasibility) Error() string { return "predict: no feasible parameter window: " + e.Message }

// Is makes errors.Is(err, ErrInfeasible) true.
func (e *Infeasibility) Is(target error) bool { return target == ErrInfeasible }

// Window is the result of ParameterWindow. Cells holds every grid point in
// voltage-major, then travel speed, then extension order, feasible or not.
type Window struct {
	Cells []WindowCell
	// WireFeedSpeedMPerMin is the feasible wire feed speed interval when a
	// deposition target without Lesnewich bounds it; nil otherwise.
	WireFeedSpeedMPerMin *LimitedInterval
	Feasible             bool
	Nominal              WindowPoint    // valid only when Feasible
	Infeasible           *Infeasibility // set only when !Feasible
	// Unchecked lists given limits no model relates to the other
	// variables (e.g. a wire feed speed range with no wire data).
	Unchecked []Limit
}
