package predict

import (
	"fmt"
	"math"
)

// DefaultDesignLevels is the number of evenly spaced levels an axis of the
// candidate grid gets when no step size is given.
const DefaultDesignLevels = 5

// maxDesignCandidates bounds the candidate grid one plan may search.
const maxDesignCandidates = 200000

// DesignSteps are the step sizes the shop sets its machines in: current in
// A, voltage in V, travel speed in mm/s, extension in mm. Candidate values
// are whole multiples of the step (a 5 A step gives 185, 190, 195 A...);
// 0 leaves the axis at DefaultDesignLevels evenly spaced values.
type DesignSteps struct {
	CurrentA, VoltageV, TravelSpeedMMPerS, ExtensionMM float64
}

// DesignSpace is where a plan may put coupons: the qualified ranges (a plan
// never proposes a setting outside them), the step sizes and, optionally,
// the further limits of a parameter window (Limits, nil: ranges only).
// ExtensionMM is required by the melting-rate model and ignored otherwise.
type DesignSpace struct {
	CurrentA, VoltageV, TravelSpeedMMPerS Range
	ExtensionMM                           *Range
	Steps                                 DesignSteps
	Limits                                *WindowLimits
	// ExtensionOffsetMM is added to an extension before its step applies:
	// a shop sets the CTWD (extension + arc length) in steps, not the extension.
	ExtensionOffsetMM float64
}

// WindowLimits answers whether a setting lies inside a parameter window:
// its ranges and every target it states (minimum penetration, heat input
// maximum, deposition band), with the window's own closed-form current
// bounds (ParameterWindow).
type WindowLimits struct{ m windowModel }

// NewWindowLimits validates a window problem for point checks; its grid
// fields are not used.
func NewWindowLimits(in WindowInput) (*WindowLimits, error) {
	m, err := newWindowModel(in)
	if err != nil {
		return nil, err
	}
	return &WindowLimits{m: m}, nil
}

// Allows reports whether the window admits setting p: p's current lies in
// the exact feasible current interval at p's voltage, travel speed and
// extension, and those lie in their ranges.
func (w *WindowLimits) Allows(p DesignPoint) bool {
	in := w.m.in
	inside := func(r *Range, v float64) bool { return r == nil || (v >= r.Min*(1-1e-12) && v <= r.Max*(1+1e-12)) }
	if !inside(&in.VoltageV, p.VoltageV) || !inside(&in.TravelSpeedMMPerS, p.TravelSpeedMMPerS) {
		return false
	}
	if w.m.les != nil && !inside(in.ExtensionMM, p.ExtensionMM) {
		return false
	}
	iv := w.m.cell(p.VoltageV, p.TravelSpeedMMPerS, p.ExtensionMM).CurrentA
	return p.CurrentA >= iv.Lo*(1-1e-12) && p.CurrentA <= iv.Hi*(1+1e-12)
}

// designAxis lists the candidate values of one axis inside r: whole
// multiples of step, or DefaultDesignLevels evenly spaced values (both ends
// included) when step is 0.
func designAxis(r Range, step float64, field string) ([]float64, error) {
	if err := r.validate(field + " range"); err != nil {
		return nil, err
	}
	switch {
	case math.IsNaN(step) || math.IsInf(step, 0) || step < 0:
		return nil, &InputError{Field: field + " step", Value: step, Reason: "must be zero (no step) or a positive number"}
	case step == 0 && r.Min == r.Max:
		return []float64{r.Min}, nil
	case step == 0:
		out := make([]float64, DefaultDesignLevels)
		for i := range out {
			out[i] = r.Min + (r.Max-r.Min)*float64(i)/float64(DefaultDesignLevels-1)
		}
		out[len(out)-1] = r.Max
		return out, nil
	}
	lo, hi := math.Ceil(r.Min/step-1e-9), math.Floor(r.Max/step+1e-9)
	if lo > hi {
		return nil, &InputError{Field: field + " step", Value: step,
			Reason: fmt.Sprintf("no multiple of the step lies within the range %g–%g", r.Min, r.Max)}
	}
	if n := hi - lo + 1; !(n <= maxDesignCandidates) { // also NaN and ∞: a step too small for the range
		return nil, &InputError{Field: field + " step", Value: step, Reason: "gives too many values; choose a coarser step"}
	}
	out := make([]float64, 0, int(hi-lo)+1)
	for k := lo; k <= hi; k++ {
		// Rounded to 9 significant digits so 0.1 V steps print as 24.3, not 24.299999999999997.
		v, _ := roundSig(k*step, 9)
		out = append(out, v)
	}
	return out, nil
}

// roundSig rounds v to n significant digits.
func roundSig(v float64, n int) (float64, bool) {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v, false
	}
	p := math.Pow(10, float64(n-1)-math.Floor(math.Log10(math.Abs(v))))
	return math.Round(v*p) / p, true
}

// designGrid is the candidate grid of a model: every combination of the axes
// the model's terms use, inside the space and its limits. Axes the model
// does not use are held at their centre value (see centreOf).
type designGrid struct {
	current, voltage, travel, extension []float64
	points                              []DesignPoint
}

func newDesignGrid(model ModelKind, sp DesignSpace) (*designGrid, error) {
	g := &designGrid{}
	var err error
	if g.current, err = designAxis(sp.CurrentA, sp.Steps.CurrentA, "current A"); err != nil {
		return nil, err
	}
	if g.voltage, err = designAxis(sp.VoltageV, sp.Steps.VoltageV, "arc voltage V"); err != nil {
		return nil, err
	}
	if g.travel, err = designAxis(sp.TravelSpeedMMPerS, sp.Steps.TravelSpeedMMPerS, "travel speed mm/s"); err != nil {
		return nil, err
	}
	g.extension = []float64{0}
	if model == ModelLesnewich {
		if sp.ExtensionMM == nil {
			return nil, &InputError{Field: "electrode extension mm range", Reason: "is required to plan melting-rate coupons"}
		}
		off := sp.ExtensionOffsetMM
		shifted := Range{sp.ExtensionMM.Min + off, sp.ExtensionMM.Max + off}
		if g.extension, err = designAxis(shifted, sp.Steps.ExtensionMM, "electrode extension mm"); err != nil {
			return nil, err
		}
		for i := range g.extension {
			g.extension[i], _ = roundSig(g.extension[i]-off, 9)
		}
		// Voltage and travel speed do not enter the melting-rate model: weld at their centre.
		g.voltage, g.travel = []float64{centreOf(g.voltage, true)}, []float64{centreOf(g.travel, true)}
	}
	if n := len(g.current) * len(g.voltage) * len(g.travel) * len(g.extension); n > maxDesignCandidates {
		return nil, &InputError{Field: "steps", Value: float64(n),
			Reason: fmt.Sprintf("the candidate grid would have %d settings, more than %d; choose coarser steps", n, maxDesignCandidates)}
	}
	for _, i := range g.current {
		for _, v := range g.voltage {
			for _, s := range g.travel {
				for _, l := range g.extension {
					p := DesignPoint{CurrentA: i, VoltageV: v, TravelSpeedMMPerS: s, ExtensionMM: l}
					if sp.Limits == nil || sp.Limits.Allows(p) {
						g.points = append(g.points, p)
					}
				}
			}
		}
	}
	if len(g.points) == 0 {
		return nil, &InputError{Field: "ranges", Reason: "no setting on the step grid lies inside the ranges and the window's limits"}
	}
	return g, nil
}

// centreOf returns the axis value nearest the centre of the axis: the
// geometric mean of its ends when the model is fitted in log space, else
// the arithmetic mean.
func centreOf(axis []float64, logSpace bool) float64 {
	lo, hi := axis[0], axis[len(axis)-1]
	c := (lo + hi) / 2
	if logSpace {
		c = math.Sqrt(lo * hi)
	}
	best := axis[0]
	for _, v := range axis {
		if math.Abs(v-c) < math.Abs(best-c) {
			best = v
		}
	}
	return best
}
