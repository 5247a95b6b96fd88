package predict

import (
	"errors"
	"fmt"
	"math"
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
type PenetrationTarget struct {
	MinMM float64
	K     JacksonK
	Fit   *PenetrationFit
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

// windowModel holds a validated WindowInput with every target reduced to
// the numbers the grid loop needs.
type windowModel struct {
	in               WindowInput
	km               float64 // metric Jackson K; 0 without a penetration target or with a fit
	free             *freePenetration
	heatFactor       float64 // F in H = F·V·I/S; 0 without a heat input target
	les              *Lesnewich
	depLoMR, depHiMR float64 // melting rate band (kg/h) from the deposition band
	wfsLoMR, wfsHiMR float64 // melting rate band (kg/h) from the WFS range; 0 unused
	wfs              *LimitedInterval
	unchecked        []Limit
}

func newWindowModel(in WindowInput) (m windowModel, err error) {
	m.in = in
	for _, r := range []struct {
		name string
		r    *Range
	}{{"current A", &in.CurrentA}, {"arc voltage V", &in.VoltageV}, {"travel speed mm/s", &in.TravelSpeedMMPerS},
		{"wire feed speed m/min", in.WireFeedSpeedMPerMin}, {"electrode extension mm", in.ExtensionMM}} {
		if r.r != nil {
			if err := r.r.validate(r.name + " range"); err != nil {
				return m, err
			}
		}
	}
	if p := in.Penetration; p != nil {
		if err := mustBePositive("minimum penetration mm", p.MinMM); err != nil {
			return m, err
		}
		if p.Fit != nil {
			fp, err := newFreePenetration(*p.Fit)
			if err != nil {
				return m, err
			}
			m.free = &fp
		} else if m.km, err = metricK(p.K); err != nil {
			return m, err
		}
	}
	if h := in.HeatInput; h != nil {
		if err := mustBePositive("maximum heat input J/mm", h.MaxJPerMM); err != nil {
			return m, err
		}
		f, err := h.Rule.Factor()
		if err != nil {
			return m, err
		}
		m.heatFactor = f
	}
	if err := m.setDeposition(); err != nil {
		return m, err
	}
	return m, nil
}

// setDeposition reduces the deposition target and the wire feed speed range.
func (m *windowModel) setDeposition() error {
	d, wfs := m.in.Deposition, m.in.WireFeedSpeedMPerMin
	if d == nil {
		if wfs != nil {
			m.unchecked = append(m.unchecked, LimitWireFeedSpeedMin, LimitWireFeedSpeedMax)
		}
		return nil
	}
	if err := (Range{d.MinKgPerH, d.MaxKgPerH}).validate("deposition rate kg/h"); err != nil {
		return err
	}
	if err := checkEfficiency(d.Efficiency); err != nil {
		return err
	}
	perWFS := 0.0 // kg/h of melted wire per m/min of feed
	if d.Lesnewich == nil || d.WireDiameterMM != 0 || d.DensityKgPerMM3 != 0 {
		f, err := wireMassPerHour(d.WireDiameterMM, d.DensityKgPerMM3)
		if err != nil {
			return err
		}
		perWFS = f
	}
	if d.Lesnewich == nil {
		perWFS *= d.Efficiency // deposited kg/h per m/min
		iv := LimitedInterval{d.MinKgPerH / perWFS, d.MaxKgPerH / perWFS, LimitDepositionMin, LimitDepositionMax}
		if wfs != nil {
			iv.raise(wfs.Min, LimitWireFeedSpeedMin)
			iv.lower(wfs.Max, LimitWireFeedSpeedMax)
		}
		m.wfs = &iv
		return nil
	}
	if err := d.Lesnewich.Validate(); err != nil {
		return err
	}
	if m.in.ExtensionMM == nil {
		return &InputError{Field: "electrode extension mm range", Reason: "required with a Lesnewich deposition target"}
	}
	m.les = d.Lesnewich
	m.depLoMR, m.depHiMR = d.MinKgPerH/d.Efficiency, d.MaxKgPerH/d.Efficiency
	switch {
	case wfs != nil && perWFS > 0:
		m.wfsLoMR, m.wfsHiMR = wfs.Min*perWFS, wfs.Max*perWFS
	case wfs != nil:
		m.unchecked = append(m.unchecked, LimitWireFeedSpeedMin, LimitWireFeedSpeedMax)
	}
	return nil
}

// cell intersects the closed-form current bound of every limit at one grid point.
func (m *windowModel) cell(v, s, l float64) WindowCell {
	iv := LimitedInterval{m.in.CurrentA.Min, m.in.CurrentA.Max, LimitCurrentMin, LimitCurrentMax}
	if m.km > 0 { // P(I) ≥ Pmin ⇔ I ≥ (Pmin/K)^(3/4)·(S·V²)^(1/4)
		iv.raise(jacksonCurrent(m.km, m.in.Penetration.MinMM, s, v), LimitPenetrationMin)
	}
	if m.free != nil {
		m.free.bound(&iv, m.in.Penetration.MinMM, s, v)
	}
	if m.heatFactor > 0 { // F·V·I/S ≤ Hmax ⇔ I ≤ Hmax·S/(F·V)
		iv.lower(m.in.HeatInput.MaxJPerMM*s/(m.heatFactor*v), LimitHeatInputMax)
	}
	if m.les != nil { // Lesnewich melting rate is increasing in I: invert each bound
		a, bl := m.les.AlphaKgPerHA, m.les.BetaKgPerHA2MM*l
		iv.raise(lesnewichCurrent(a, bl, m.depLoMR), LimitDepositionMin)
		iv.lower(lesnewichCurrent(a, bl, m.depHiMR), LimitDepositionMax)
		if m.wfsHiMR > 0 {
			iv.raise(lesnewichCurrent(a, bl, m.wfsLoMR), LimitWireFeedSpeedMin)
			iv.lower(lesnewichCurrent(a, bl, m.wfsHiMR), LimitWireFeedSpeedMax)
		}
	}
	return WindowCell{VoltageV: v, TravelSpeedMMPerS: s, ExtensionMM: l, CurrentA: iv}
}

// gridAxis samples r at steps evenly spaced points including both ends.
func gridAxis(r Range, steps int, field string) ([]float64, error) {
	if steps < 0 {
		return nil, &InputError{Field: field, Value: float64(steps), Reason: "must not be negative"}
	}
	if r.Min == r.Max {
		return []float64{r.Min}, nil
	}
	if steps == 0 {
		steps = DefaultWindowSteps
	}
	if steps == 1 {
		return []float64{(r.Min + r.Max) / 2}, nil
	}
	pts := make([]float64, steps)
	for i := range pts {
		pts[i] = r.Min + (r.Max-r.Min)*float64(i)/float64(steps-1)
	}
	pts[steps-1] = r.Max
	return pts, nil
}

// ParameterWindow returns the feasible region of in: for every grid point the
// exact current interval allowed by all limits, and the nominal point.
//
// Margins are normalized as natural-log ratios, so a margin of 0.05 means
// the adjusted variable can move about 5 % before reaching that limit. For a
// limit on current (the current range and every target, each inverted to a
// current bound) the margin is ln(I/I_lo) or ln(I_hi/I); for the voltage,
// travel speed and extension ranges it is the log ratio of the grid value
// to the range end (ranges fixed with Min == Max are not margins); for a wire
// feed speed interval it is measured the same way at its geometric mean. At
// each grid point the current with the largest smallest margin is the
// geometric mean √(I_lo·I_hi); the nominal point is the grid point whose
// smallest margin is largest (first one on ties).
//
// An empty window is not an error: Feasible is false and Infeasible names
// the conflicting limits. Invalid input returns an *InputError.
func ParameterWindow(in WindowInput) (Window, error) {
	m, err := newWindowModel(in)
	if err != nil {
		return Window{}, err
	}
	vs, err := gridAxis(in.VoltageV, in.VoltageSteps, "voltage steps")
	if err != nil {
		return Window{}, err
	}
	ss, err := gridAxis(in.TravelSpeedMMPerS, in.TravelSpeedSteps, "travel speed steps")
	if err != nil {
		return Window{}, err
	}
	ls := []float64{0}
	if e := in.ExtensionMM; e != nil {
		steps := in.ExtensionSteps
		if m.les == nil {
			steps = 1 // extension affects no limit: hold it at the midpoint
		}
		if ls, err = gridAxis(*e, steps, "extension steps"); err != nil {
			return Window{}, err
		}
	}
	if n := len(vs) * len(ss) * len(ls); n > maxWindowCells {
		return Window{}, &InputError{Field: "grid points", Value: float64(n), Reason: fmt.Sprintf("exceeds %d", maxWindowCells)}
	}
	w := Window{Cells: make([]WindowCell, 0, len(vs)*len(ss)*len(ls)), WireFeedSpeedMPerMin: m.wfs, Unchecked: m.unchecked}
	best, bestMargin := -1, math.Inf(-1)
	closest, closestGap := -1, math.Inf(1)
	for _, v := range vs {
		for _, s := range ss {
			for _, l := range ls {
				c := m.cell(v, s, l)
				w.Cells = append(w.Cells, c)
				if c.CurrentA.Empty() {
					if gap := math.Log(c.CurrentA.Lo / c.CurrentA.Hi); gap < closestGap {
						closest, closestGap = len(w.Cells)-1, gap
					}
				} else if mg := m.cellMargin(c); mg > bestMargin {
					best, bestMargin = len(w.Cells)-1, mg
				}
			}
		}
	}
	switch {
	case m.wfs != nil && m.wfs.Empty():
		w.Infeasible = infeasibility(*m.wfs, WindowCell{}, "wire feed speed", "m/min")
	case best < 0:
		c := w.Cells[closest]
		w.Infeasible = infeasibility(c.CurrentA, c, "current", "A")
		w.Infeasible.Message = fmt.Sprintf("at %.4g V, %.4g mm/s, extension %.4g mm: %s",
			c.VoltageV, c.TravelSpeedMMPerS, c.ExtensionMM, w.Infeasible.Message)
	default:
		w.Feasible = true
		w.Nominal = m.nominal(w.Cells[best])
	}
	return w, nil
}

func infeasibility(iv LimitedInterval, c WindowCell, what, unit string) *Infeasibility {
	return &Infeasibility{
		Binding: []Limit{iv.LoLimit, iv.HiLimit}, Closest: iv, Cell: c,
		Message: fmt.Sprintf("%s needs %s ≥ %.5g %s but %s allows ≤ %.5g %s",
			iv.LoLimit, what, iv.Lo, unit, iv.HiLimit, iv.Hi, unit),
	}
}

// namedMargin is one limit's log margin at a point.
type namedMargin struct {
	lim Limit
	m   float64
}

// margins lists the log margin to every limit at the nominal current of c.
func (m *windowModel) margins(c WindowCell, dst []namedMargin) []namedMargin {
	half := 0.5 * math.Log(c.CurrentA.Hi/c.CurrentA.Lo)
	dst = append(dst, namedMargin{c.CurrentA.LoLimit, half}, namedMargin{c.CurrentA.HiLimit, half})
	axis := func(r *Range, x float64, lo, hi Limit) {
		if r != nil && r.Min < r.Max {
			dst = append(dst, namedMargin{lo, math.Log(x / r.Min)}, namedMargin{hi, math.Log(r.Max / x)})
		}
	}
	axis(&m.in.VoltageV, c.VoltageV, LimitVoltageMin, LimitVoltageMax)
	axis(&m.in.TravelSpeedMMPerS, c.TravelSpeedMMPerS, LimitTravelSpeedMin, LimitTravelSpeedMax)
	axis(m.in.ExtensionMM, c.ExtensionMM, LimitExtensionMin, LimitExtensionMax)
	if m.wfs != nil {
		h := 0.5 * math.Log(m.wfs.Hi/m.wfs.Lo)
		dst = append(dst, namedMargin{m.wfs.LoLimit, h}, namedMargin{m.wfs.HiLimit, h})
	}
	return dst
}

// cellMargin is the smallest margin at the nominal current of c.
func (m *windowModel) cellMargin(c WindowCell) float64 {
	var buf [12]namedMargin
	low := math.Inf(1)
	for _, nm := range m.margins(c, buf[:0]) {
		low = math.Min(low, nm.m)
	}
	return low
}

// nominal builds the nominal point at the geometric-mean current of c.
// The forward models cannot fail here: every input was validated.
func (m *windowModel) nominal(c WindowCell) WindowPoint {
	i := math.Sqrt(c.CurrentA.Lo * c.CurrentA.Hi)
	p := WindowPoint{CurrentA: i, VoltageV: c.VoltageV, TravelSpeedMMPerS: c.TravelSpeedMMPerS, ExtensionMM: c.ExtensionMM}
	p.ArcEnergyJPerMM = c.VoltageV * i / c.TravelSpeedMMPerS
	if m.km > 0 {
		p.PenetrationMM = m.km * jacksonGroup(i, c.TravelSpeedMMPerS, c.VoltageV)
	}
	if m.free != nil {
		p.PenetrationMM = m.free.medianMM(i, c.TravelSpeedMMPerS, c.VoltageV)
	}
	if m.heatFactor > 0 {
		p.HeatInputJPerMM = m.heatFactor * p.ArcEnergyJPerMM
	}
	if d := m.in.Deposition; d != nil {
		perWFS, _ := wireMassPerHour(d.WireDiameterMM, d.DensityKgPerMM3)
		switch {
		case m.les != nil:
			mr := m.les.AlphaKgPerHA*i + m.les.BetaKgPerHA2MM*c.ExtensionMM*i*i
			p.DepositionKgPerH = mr * d.Efficiency
			if perWFS > 0 {
				p.WireFeedSpeedMPerMin = mr / perWFS
			}
		case m.wfs != nil:
			p.WireFeedSpeedMPerMin = math.Sqrt(m.wfs.Lo * m.wfs.Hi)
			p.DepositionKgPerH = p.WireFeedSpeedMPerMin * perWFS * d.Efficiency
		}
	}
	var buf [12]namedMargin
	all := m.margins(c, buf[:0])
	p.Margin = math.Inf(1)
	for _, nm := range all {
		p.Margin = math.Min(p.Margin, nm.m)
	}
	for _, nm := range all {
		if nm.m <= p.Margin+1e-12 {
			p.Closest = append(p.Closest, nm.lim)
		}
	}
	return p
}
