package predict

import (
	"fmt"
	"math"
)

// windowModel holds a validated WindowInput with every target reduced to
// the numbers the grid loop needs.
type windowModel struct {
	in               WindowInput
	km               float64 // metric Jackson K; 0 without a penetration target or with a fit
	free             *freePenetration
	lb               *lowerBound // nil: judged on the median
	heatFactor       float64     // F in H = F·V·I/S; 0 without a heat input target
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
		if p.LowerBound != nil {
			if m.lb, err = newLowerBound(*p.LowerBound, p.Level); err != nil {
				return m, err
			}
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
		minMM := m.in.Penetration.MinMM
		if m.lb != nil { // the lower bound reaches Pmin where the median reaches Pmin·e^h
			minMM = m.lb.medianMin(minMM, s, v, nil)
		}
		iv.raise(jacksonCurrent(m.km, minMM, s, v), LimitPenetrationMin)
	}
	if m.free != nil {
		minMM := m.in.Penetration.MinMM
		if m.lb != nil {
			minMM = m.lb.medianMin(minMM, s, v, func(x float64) float64 { return m.free.current(x, s, v) })
		}
		m.free.bound(&iv, minMM, s, v)
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
