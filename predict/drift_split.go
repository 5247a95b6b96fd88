package predict

import (
	"fmt"
	"slices"
	"sort"
	"strings"
)

// Split fields a drift chart can follow. A coupon records its welder always
// and its power source and wire lot when the shop enters them.
const (
	SplitGroup       = "calibration_group"
	SplitPowerSource = "power_source_id"
	SplitWelder      = "welder_id"
	SplitFillerLot   = "filler_lot"
)

// DriftObservation is one new coupon against the active calibration, in
// welding order: its residual and prediction SD in the model's units
// (ln(mm) for penetration, kg/h for melting rate) and what it was welded
// with ("" where not recorded).
type DriftObservation struct {
	ID          string
	Residual    float64
	SD          float64
	PowerSource string
	Welder      string
	FillerLot   string
}

// DriftSeries is the chart of one split: which coupons (indices into the
// observations, in order), the CUSUM over them and, when it signals now,
// advice in words.
type DriftSeries struct {
	Field   string
	Value   string
	Indices []int
	Chart   CUSUMChart
	Advice  string
	// ExplainedBy names the power source whose coupons alone make this
	// chart (the group, a welder or a wire lot) signal: charted without
	// them it is in control. Empty when the chart is in control or its
	// signal stands without them.
	ExplainedBy string
}

// Label names the split as a person would: "power source PS-3".
func (s DriftSeries) Label() string {
	switch s.Field {
	case SplitPowerSource:
		return "power source " + s.Value
	case SplitWelder:
		return "welder " + s.Value
	case SplitFillerLot:
		return "wire lot " + s.Value
	}
	return "the whole calibration group"
}

// DriftCharts charts the whole group and each recorded power source, welder
// and wire lot separately (CUSUMK, CUSUMH), and words the advice of each
// split that signals now: a power source drifting while the group's other
// power sources do not points at that machine.
func DriftCharts(obs []DriftObservation) []DriftSeries {
	all := make([]int, len(obs))
	for i := range all {
		all[i] = i
	}
	series := []DriftSeries{{Field: SplitGroup, Indices: all}}
	for _, f := range []struct {
		field string
		of    func(DriftObservation) string
	}{
		{SplitPowerSource, func(o DriftObservation) string { return o.PowerSource }},
		{SplitWelder, func(o DriftObservation) string { return o.Welder }},
		{SplitFillerLot, func(o DriftObservation) string { return o.FillerLot }},
	} {
		by := map[string][]int{}
		for i, o := range obs {
			if v := f.of(o); v != "" {
				by[v] = append(by[v], i)
			}
		}
		keys := make([]string, 0, len(by))
		for k := range by {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			series = append(series, DriftSeries{Field: f.field, Value: k, Indices: by[k]})
		}
	}
	for i := range series {
		z := make([]float64, len(series[i].Indices))
		for j, k := range series[i].Indices {
			z[j] = obs[k].Residual / obs[k].SD
		}
		series[i].Chart = RunCUSUM(z, CUSUMK, CUSUMH)
	}
	for i := range series {
		series[i].Advice = advice(series, i)
	}
	explain(obs, series)
	return series
}

// explain marks the group, welder and wire lot charts that signal only
// because they share the coupons of a power source drifting alone: a
// welder who used that machine inherits its shift. Each such chart is run
// again without that machine's coupons; if it is then in control, its
// advice points at the machine instead.
func explain(obs []DriftObservation, series []DriftSeries) {
	var machines []string
	for _, s := range series {
		if s.Field == SplitPowerSource && s.Chart.Current != nil && s.Advice != "" && strings.HasPrefix(s.Advice, "only ") {
			machines = append(machines, s.Value)
		}
	}
	if len(machines) == 0 {
		return
	}
	for i := range series {
		s := &series[i]
		if s.Field == SplitPowerSource || s.Chart.Current == nil {
			continue
		}
		var z []float64
		for _, k := range s.Indices {
			if !slices.Contains(machines, obs[k].PowerSource) {
				z = append(z, obs[k].Residual/obs[k].SD)
			}
		}
		if RunCUSUM(z, CUSUMK, CUSUMH).Current == nil {
			s.ExplainedBy = strings.Join(machines, ", ")
			s.Advice = fmt.Sprintf("explained by power source %s: without its coupons this chart is in control; check that machine first", s.ExplainedBy)
		}
	}
}

// advice words what a signalling split suggests, comparing it with the
// other splits of its field.
func advice(series []DriftSeries, i int) string {
	s := series[i]
	if s.Chart.Current == nil {
		return ""
	}
	others, othersOut := 0, 0
	for j, o := range series {
		if j != i && o.Field == s.Field {
			others++
			if o.Chart.Current != nil {
				othersOut++
			}
		}
	}
	alone := others > 0 && othersOut == 0
	switch {
	case s.Field == SplitPowerSource && alone:
		return fmt.Sprintf("only %s has drifted, the group's other power sources have not: check the machine's calibration (its current and voltage readings against a calibrated meter)", s.Value)
	case s.Field == SplitPowerSource && others == 0:
		return "the group's only recorded power source has drifted: check the machine's calibration, and look for a common cause (wire, gas, base metal, section measurement)"
	case s.Field == SplitPowerSource:
		return "other power sources have drifted too: look for a common cause (wire, gas, base metal, section measurement) before recalibrating any machine"
	case s.Field == SplitWelder && alone:
		return fmt.Sprintf("only welder %s has drifted: compare the welding technique (stick-out, torch angle, travel) with the procedure", s.Value)
	case s.Field == SplitFillerLot && alone:
		return fmt.Sprintf("only wire lot %s has drifted: check the lot against its certificate (diameter, classification)", s.Value)
	case s.Field == SplitGroup:
		return "the group's coupons no longer follow the active calibration: see which power source, welder or wire lot drifts, or refit the calibration"
	}
	return "shared with others of its kind: look for a common cause (wire, gas, base metal, section measurement)"
}
