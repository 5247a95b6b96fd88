package api

import (
	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// windowFieldNames maps predict's names of window inputs to request fields.
var windowFieldNames = map[string]string{
	"current A range min": "current_a.min", "current A range max": "current_a.max",
	"arc voltage V range min": "voltage_v.min", "arc voltage V range max": "voltage_v.max",
	"travel speed mm/s range min": "travel_speed_mm_s.min", "travel speed mm/s range max": "travel_speed_mm_s.max",
	"wire feed speed m/min range min": "wire_feed_speed_m_min.min", "wire feed speed m/min range max": "wire_feed_speed_m_min.max",
	"electrode extension mm range min": "extension_mm.min", "electrode extension mm range max": "extension_mm.max",
	"electrode extension mm range": "extension_mm", "deposition rate kg/h min": "deposition_rate_kg_h.min",
	"deposition rate kg/h max": "deposition_rate_kg_h.max", "efficiency": "deposition_efficiency",
	"wire diameter mm": "wire_diameter_mm", "waveform power ratio": "waveform_power_ratio",
	"jackson K": "jackson_k.value", "jackson K units": "jackson_k.units",
	"lesnewich alpha kg/(h·A)": "lesnewich.alpha_kg_h_a", "lesnewich beta kg/(h·A²·mm)": "lesnewich.beta_kg_h_a2_mm",
	"lesnewich coefficients": "lesnewich", "heat input form": "heat_input_form",
	"jackson_free current exponent": "min_penetration_mm",
}

// windowOut is the feasible region: every grid point with its exact current
// interval, the nominal point, and the binding limits. BindingLimits are the
// limits in conflict when the window is empty, else those nearest the
// nominal point.
type windowOut struct {
	Feasible                 bool            `json:"feasible"`
	BindingLimits            []predict.Limit `json:"binding_limits"`
	Nominal                  *windowPointOut `json:"nominal,omitempty"`
	Infeasible               *infeasibleOut  `json:"infeasible,omitempty"`
	WireFeedSpeedMPerMin     *limitedOut     `json:"wire_feed_speed_m_min,omitempty"`
	Unchecked                []predict.Limit `json:"unchecked_limits"`
	FeasibleCells            int             `json:"feasible_cells"`
	Cells                    []windowCellOut `json:"cells"`
	PenetrationSource        string          `json:"penetration_source"`
	PenetrationModel         string          `json:"penetration_model,omitempty"`
	PenetrationCalibrationID *uuid.UUID      `json:"penetration_calibration_id,omitempty"`
	LesnewichSource          string          `json:"lesnewich_source"`
	LesnewichCalibrationID   *uuid.UUID      `json:"lesnewich_calibration_id,omitempty"`
	HeatInputForm            string          `json:"heat_input_form,omitempty"`
	HeatInputFactor          *float64        `json:"heat_input_factor,omitempty"`
	// Basis is how the minimum penetration was judged: lower_bound (the
	// prediction interval's lower end at PenetrationLevel) or median.
	Basis            string   `json:"basis,omitempty"`
	PenetrationLevel *float64 `json:"penetration_level,omitempty"`
	// ProcedureID and LimitsFrom say, for a procedure-scoped window, where
	// each range, the minimum penetration and the group came from.
	ProcedureID *uuid.UUID        `json:"procedure_id,omitempty"`
	LimitsFrom  map[string]string `json:"limits_from,omitempty"`
	Notes       []string          `json:"notes,omitempty"`
	Caution     string            `json:"caution"`
}

// windowPointOut is the nominal point and the model values there (left out
// when the quantity was not asked for); MarginLn is its smallest log margin.
type windowPointOut struct {
	CurrentA             float64         `json:"current_a"`
	VoltageV             float64         `json:"voltage_v"`
	TravelSpeedMMPerS    float64         `json:"travel_speed_mm_s"`
	TravelSpeedInPerMin  float64         `json:"travel_speed_in_min"`
	ExtensionMM          float64         `json:"extension_mm,omitempty"`
	WireFeedSpeedMPerMin float64         `json:"wire_feed_speed_m_min,omitempty"`
	PenetrationMM        float64         `json:"penetration_mm,omitempty"`
	DepositionRateKgH    float64         `json:"deposition_rate_kg_h,omitempty"`
	ArcEnergyJMM         float64         `json:"arc_energy_j_mm"`
	HeatInputJMM         float64         `json:"heat_input_j_mm,omitempty"`
	MarginLn             float64         `json:"margin_ln"`
	ClosestLimits        []predict.Limit `json:"closest_limits"`
}

// limitedOut is an interval with the limit that sets each end.
type limitedOut struct {
	Min      float64       `json:"min"`
	Max      float64       `json:"max"`
	MinLimit predict.Limit `json:"min_limit"`
	MaxLimit predict.Limit `json:"max_limit"`
}

func limited(iv predict.LimitedInterval) limitedOut {
	return limitedOut{Min: iv.Lo, Max: iv.Hi, MinLimit: iv.LoLimit, MaxLimit: iv.HiLimit}
}

// infeasibleOut explains an empty window at the grid point closest to feasible.
type infeasibleOut struct {
	Message           string     `json:"message"`
	Quantity          string     `json:"quantity"`
	Interval          limitedOut `json:"interval"`
	VoltageV          float64    `json:"voltage_v,omitempty"`
	TravelSpeedMMPerS float64    `json:"travel_speed_mm_s,omitempty"`
	ExtensionMM       float64    `json:"extension_mm,omitempty"`
}

// windowCellOut is one grid point and its current interval (empty when min > max).
type windowCellOut struct {
	VoltageV          float64    `json:"voltage_v"`
	TravelSpeedMMPerS float64    `json:"travel_speed_mm_s"`
	ExtensionMM       float64    `json:"extension_mm,omitempty"`
	Feasible          bool       `json:"feasible"`
	CurrentA          limitedOut `json:"current_a"`
}

// windowTargets sets the penetration, deposition and heat input targets,
// taking coefficients from the group's active calibrations first.
func (s *Server) windowTargets(c echo.Context, g *db.CalibrationGroup, in windowIn, w *window, out *windowOut) error {
	out.PenetrationSource, out.LesnewichSource = sourceNone, sourceNone
	if w.MinPenetrationMM != nil {
		if err := s.windowPenetration(c, g, w, out); err != nil {
			return err
		}
	}
	if w.Deposition != nil {
		les, cal, err := s.lesnewichFor(c, g, w.Lesnewich)
		if err != nil {
			return err
		}
		d := &predict.DepositionTarget{MinKgPerH: w.Deposition.Min, MaxKgPerH: w.Deposition.Max, Efficiency: *w.Efficiency, Lesnewich: les}
		if w.WireDiameterMM != nil {
			d.WireDiameterMM, d.DensityKgPerMM3 = *w.WireDiameterMM, predict.CarbonSteelDensityKgPerMM3
		}
		w.in.Deposition = d
		switch {
		case cal != nil:
			out.LesnewichSource, out.LesnewichCalibrationID = sourceCalibration, &cal.ID
		case les != nil:
			out.LesnewichSource = sourceRequest
		}
	}
	if w.MaxHeatInputJMM != nil {
		rule, err := heatRuleOf(in)
		if err != nil {
			return err
		}
		w.in.HeatInput = &predict.HeatInputTarget{MaxJPerMM: *w.MaxHeatInputJMM, Rule: rule}
		f, err := rule.Factor()
		if err != nil {
			return renamed(err, windowFieldNames)
		}
		out.HeatInputForm, out.HeatInputFactor = string(rule.Form), &f
	}
	return nil
}

// windowPenetration sets the minimum penetration target from the caller's K
// when given, else the group's calibration in use: jackson_free (its own
// exponents) or jackson_fixed (its K), whichever was activated last.
func (s *Server) windowPenetration(c echo.Context, g *db.CalibrationGroup, w *window, out *windowOut) error {
	var free *db.Calibration
	var err error
	if w.JacksonK == nil { // an explicit K is used exactly; else the group's calibration in use
		if free, err = s.activeCalibration(c, g, db.CalibrationJacksonFree); err != nil {
			return err
		}
	}
	if free != nil && free.Fit.Penetration != nil {
		w.in.Penetration = &predict.PenetrationTarget{MinMM: *w.MinPenetrationMM, Fit: free.Fit.Penetration}
		out.PenetrationSource, out.PenetrationModel, out.PenetrationCalibrationID = sourceCalibration, string(free.Model), &free.ID
		return setBasis(w, free, out)
	}
	k, cal, err := s.jacksonKFor(c, g, w.JacksonK)
	if err != nil {
		return err
	}
	if k == nil {
		return badRequest("jackson_k", "is required with min_penetration: give it, or the group of an active jackson_free or jackson_fixed calibration")
	}
	w.in.Penetration = &predict.PenetrationTarget{MinMM: *w.MinPenetrationMM, K: *k}
	out.PenetrationSource, out.PenetrationModel, out.PenetrationCalibrationID = sourceRequest, string(predict.ModelJacksonFixed), nil
	if cal != nil {
		out.PenetrationSource, out.PenetrationModel, out.PenetrationCalibrationID = sourceCalibration, string(cal.Model), &cal.ID
	}
	return setBasis(w, cal, out)
}

// setBasis decides how the minimum penetration is judged: on the lower
// bound of the calibration's prediction interval at its level (the default
// when a calibration is used: the safe side), or on the median (the only
// basis for a K without an interval, or when asked for).
func setBasis(w *window, cal *db.Calibration, out *windowOut) error {
	basis := w.Basis
	switch {
	case cal == nil && basis == predict.BasisLowerBound:
		return unprocessable(FieldIssue{"basis", "lower_bound needs a calibration with a prediction interval; a jackson_k has none (use median, or the group of an active calibration)"})
	case cal == nil || basis == predict.BasisMedian:
		basis = predict.BasisMedian
	default:
		basis = predict.BasisLowerBound
		w.in.Penetration.LowerBound, w.in.Penetration.Level = cal.Fit.Penetration, cal.Level
		out.PenetrationLevel = ptrTo(cal.Level)
	}
	out.Basis = basis
	return nil
}

// heatRuleOf builds the heat input rule the window's limit uses: arc energy
// unless heat_input_form says otherwise; thermal efficiency takes k from
// thermal_efficiency, else from the process.
func heatRuleOf(in windowIn) (predict.HeatInputRule, error) {
	r := predict.HeatInputRule{Form: predict.HeatInputForm(in.HeatInputForm)}
	switch r.Form {
	case "":
		r.Form = predict.HeatInputArcEnergy
	case predict.HeatInputThermalEfficiency:
		switch {
		case in.ThermalEfficiency != nil:
			r.Efficiency = *in.ThermalEfficiency
		case in.Process != nil:
			k, err := predict.ThermalEfficiency(predict.ArcProcess(*in.Process))
			if err != nil {
				return r, renamed(err, map[string]string{"process": "process"})
			}
			r.Efficiency = k
		default:
			return r, badRequest("thermal_efficiency", "is required with heat_input_form thermal_efficiency (or give process)")
		}
	case predict.HeatInputWaveformEnergy, predict.HeatInputWaveformPower:
		if in.WaveformPowerRatio == nil {
			return r, badRequest("waveform_power_ratio", "is required with a waveform heat input form")
		}
		r.PowerRatio = *in.WaveformPowerRatio
	}
	return r, nil
}

// fill copies the solver's answer into the response.
func (o *windowOut) fill(w predict.Window) {
	o.Feasible, o.Unchecked, o.Cells = w.Feasible, w.Unchecked, make([]windowCellOut, len(w.Cells))
	if o.Unchecked == nil {
		o.Unchecked = []predict.Limit{}
	}
	for i, c := range w.Cells {
		o.Cells[i] = windowCellOut{VoltageV: c.VoltageV, TravelSpeedMMPerS: c.TravelSpeedMMPerS, ExtensionMM: c.ExtensionMM,
			Feasible: !c.CurrentA.Empty(), CurrentA: limited(c.CurrentA)}
		if o.Cells[i].Feasible {
			o.FeasibleCells++
		}
	}
	if w.WireFeedSpeedMPerMin != nil {
		o.WireFeedSpeedMPerMin = ptrTo(limited(*w.WireFeedSpeedMPerMin))
	}
	if w.Feasible {
		n := w.Nominal
		o.Nominal = &windowPointOut{CurrentA: n.CurrentA, VoltageV: n.VoltageV, TravelSpeedMMPerS: n.TravelSpeedMMPerS,
			TravelSpeedInPerMin: predict.MMPerSToInPerMin(n.TravelSpeedMMPerS), ExtensionMM: n.ExtensionMM,
			WireFeedSpeedMPerMin: n.WireFeedSpeedMPerMin, PenetrationMM: n.PenetrationMM, DepositionRateKgH: n.DepositionKgPerH,
			ArcEnergyJMM: n.ArcEnergyJPerMM, HeatInputJMM: n.HeatInputJPerMM, MarginLn: n.Margin, ClosestLimits: n.Closest}
		o.BindingLimits = n.Closest
		return
	}
	inf := w.Infeasible
	o.BindingLimits = inf.Binding
	o.Infeasible = &infeasibleOut{Message: inf.Message, Quantity: "current_a", Interval: limited(inf.Closest),
		VoltageV: inf.Cell.VoltageV, TravelSpeedMMPerS: inf.Cell.TravelSpeedMMPerS, ExtensionMM: inf.Cell.ExtensionMM}
	if inf.Cell == (predict.WindowCell{}) {
		o.Infeasible.Quantity = "wire_feed_speed_m_min"
	}
}
