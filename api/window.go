package api

import (
	"fmt"
	"net/http"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/predict"
)

// rangeIn is a qualified range [min, max]; the unit is in the field's name.
type rangeIn struct {
	Min float64 `json:"min"`
	Max float64 `json:"max"`
}

// rng returns r as a predict.Range, or nil when r is not given.
func (r *rangeIn) rng() *predict.Range {
	if r == nil {
		return nil
	}
	return &predict.Range{Min: r.Min, Max: r.Max}
}

// windowIn is a parameter window request: qualified ranges, grid steps and
// the targets to meet (each optional), each quantity in any registered spelling.
type windowIn struct {
	groupFields
	ProcedureID          *uuid.UUID   `json:"procedure_id"`
	Basis                string       `json:"basis"`
	CurrentA             *rangeIn     `json:"current_a"`
	VoltageV             *rangeIn     `json:"voltage_v"`
	TravelSpeedMMPerS    *rangeIn     `json:"travel_speed_mm_s"`
	WireFeedSpeedMPerMin *rangeIn     `json:"wire_feed_speed_m_min"`
	ExtensionMM          *rangeIn     `json:"extension_mm"`
	VoltageSteps         int          `json:"voltage_steps"`
	TravelSpeedSteps     int          `json:"travel_speed_steps"`
	ExtensionSteps       int          `json:"extension_steps"`
	MinPenetrationMM     *float64     `json:"min_penetration_mm"`
	JacksonK             *jacksonKIn  `json:"jackson_k"`
	DepositionRateKgH    *rangeIn     `json:"deposition_rate_kg_h"`
	DepositionEfficiency *float64     `json:"deposition_efficiency"`
	WireDiameterMM       *float64     `json:"wire_diameter_mm"`
	Lesnewich            *lesnewichIn `json:"lesnewich"`
	MaxHeatInputJMM      *float64     `json:"max_heat_input_j_mm"`
	HeatInputForm        string       `json:"heat_input_form"`
	ThermalEfficiency    *float64     `json:"thermal_efficiency"`
	WaveformPowerRatio   *float64     `json:"waveform_power_ratio"`
}

// window is the request in metric units; ranges are checked by checkRanges.
type window struct {
	in                 predict.WindowInput
	current, voltage   *predict.Range // as given; merged with a procedure's ranges into in
	travel             *predict.Range
	Basis              string
	MinPenetrationMM   *float64    `json:"min_penetration_mm" validate:"omitempty,quantity"`
	JacksonK           *jacksonKIn `json:"jackson_k"`
	Deposition         *predict.Range
	Efficiency         *float64     `json:"deposition_efficiency" validate:"omitempty,quantity"`
	WireDiameterMM     *float64     `json:"wire_diameter_mm" validate:"omitempty,quantity"`
	Lesnewich          *lesnewichIn `json:"lesnewich"`
	MaxHeatInputJMM    *float64     `json:"max_heat_input_j_mm" validate:"omitempty,quantity"`
	ThermalEfficiency  *float64     `json:"thermal_efficiency" validate:"omitempty,quantity"`
	WaveformPowerRatio *float64     `json:"waveform_power_ratio" validate:"omitempty,quantity"`
	VoltageSteps       int          `json:"voltage_steps" validate:"quantity"`
	TravelSpeedSteps   int          `json:"travel_speed_steps" validate:"quantity"`
	ExtensionSteps     int          `json:"extension_steps" validate:"quantity"`
}

func (in windowIn) metric() (window, error) {
	var u units
	w := window{MinPenetrationMM: in.MinPenetrationMM, JacksonK: in.JacksonK, Efficiency: in.DepositionEfficiency,
		Lesnewich: in.Lesnewich, WireDiameterMM: in.WireDiameterMM, MaxHeatInputJMM: in.MaxHeatInputJMM,
		ThermalEfficiency: in.ThermalEfficiency, WaveformPowerRatio: in.WaveformPowerRatio,
		VoltageSteps: in.VoltageSteps, TravelSpeedSteps: in.TravelSpeedSteps, ExtensionSteps: in.ExtensionSteps,
		Deposition: in.DepositionRateKgH.rng(),
	}
	w.current, w.voltage, w.travel, w.Basis = in.CurrentA.rng(), in.VoltageV.rng(), in.TravelSpeedMMPerS.rng(), in.Basis
	w.in.VoltageSteps, w.in.TravelSpeedSteps, w.in.ExtensionSteps = in.VoltageSteps, in.TravelSpeedSteps, in.ExtensionSteps
	w.in.WireFeedSpeedMPerMin, w.in.ExtensionMM = in.WireFeedSpeedMPerMin.rng(), in.ExtensionMM.rng()
	if w.Deposition != nil && w.Efficiency == nil {
		u.issues = append(u.issues, FieldIssue{"deposition_efficiency", "is required with a deposition rate target"})
	}
	if in.ProcedureID == nil { // without a procedure the ranges come from the request
		for _, r := range []struct {
			field string
			r     *predict.Range
		}{{"current_a", w.current}, {"voltage_v", w.voltage}, {"travel_speed_mm_s", w.travel}} {
			if r.r == nil {
				u.missing(r.field)
			}
		}
	}
	return w, u.err()
}

// scope fills the window's ranges, minimum penetration and group from the
// procedure the request names (the request's own ranges narrow them), and
// says where each came from; without a procedure the request's are used.
func (s *Server) scope(c echo.Context, in *windowIn, w *window, out *windowOut) error {
	pick := func(r *predict.Range) predict.Range {
		if r == nil {
			return predict.Range{}
		}
		return *r
	}
	if in.ProcedureID == nil {
		w.in.CurrentA, w.in.VoltageV, w.in.TravelSpeedMMPerS = pick(w.current), pick(w.voltage), pick(w.travel)
		return checkRanges(w.in, w.Deposition)
	}
	l, err := s.procedureLimitsOf(c, *in.ProcedureID)
	if err != nil {
		return err
	}
	out.ProcedureID, out.LimitsFrom = in.ProcedureID, map[string]string{}
	var issues []FieldIssue
	for _, r := range []struct {
		field string
		given *predict.Range
		dst   *predict.Range
	}{{"current_a", w.current, &w.in.CurrentA}, {"voltage_v", w.voltage, &w.in.VoltageV}, {"travel_speed_mm_s", w.travel, &w.in.TravelSpeedMMPerS}} {
		got, from := l.merge(r.field, r.given)
		if got == nil {
			issues = append(issues, FieldIssue{r.field, "is required: " + l.from + " has no range of it"})
			continue
		}
		*r.dst, out.LimitsFrom[r.field] = *got, from
	}
	if got, from := l.merge("wire_feed_speed_m_min", w.in.WireFeedSpeedMPerMin); got != nil {
		w.in.WireFeedSpeedMPerMin, out.LimitsFrom["wire_feed_speed_m_min"] = got, from
	}
	if issues != nil {
		return unprocessable(issues...)
	}
	if got, from := l.minPenetration(w.MinPenetrationMM); got != nil {
		w.MinPenetrationMM, out.LimitsFrom["min_penetration_mm"] = got, from
	}
	l.group(&in.groupFields, &w.WireDiameterMM, out.LimitsFrom)
	if l.stale != "" {
		out.Notes = append(out.Notes, "the qualified ranges may be out of date: "+l.stale)
	}
	return checkRanges(w.in, w.Deposition)
}

// checkRanges refuses a range outside the registered plausible bounds of
// its quantity or with min above max.
func checkRanges(in predict.WindowInput, dep *predict.Range) error {
	var issues []FieldIssue
	for _, r := range []struct {
		field string
		r     *predict.Range
	}{{"current_a", &in.CurrentA}, {"voltage_v", &in.VoltageV}, {"travel_speed_mm_s", &in.TravelSpeedMMPerS},
		{"wire_feed_speed_m_min", in.WireFeedSpeedMPerMin}, {"extension_mm", in.ExtensionMM}, {"deposition_rate_kg_h", dep}} {
		q := predict.MustQuantity(r.field)
		switch {
		case r.r == nil:
		case !q.Inside(r.r.Min) || !q.Inside(r.r.Max):
			issues = append(issues, FieldIssue{r.field, fmt.Sprintf("min and max must lie within %s (got %g–%g)", q.BoundsText(), r.r.Min, r.r.Max)})
		case r.r.Min > r.r.Max:
			issues = append(issues, FieldIssue{r.field + ".min", fmt.Sprintf("exceeds max (%g > %g)", r.r.Min, r.r.Max)})
		}
	}
	if issues != nil {
		return unprocessable(issues...)
	}
	return nil
}

// handleWindow answers POST /v1/parameter-window. An empty window is an
// answer (200, feasible false, with the limits in conflict), not an error.
func (s *Server) handleWindow(c echo.Context) error {
	in, w, err := bindMetric[window, windowIn](s, c)
	if err != nil {
		return err
	}
	out := windowOut{Caution: predictionCaution}
	if err := s.scope(c, &in, &w, &out); err != nil {
		return err
	}
	g, err := s.calibrationGroup(in.groupFields, w.WireDiameterMM)
	if err != nil {
		return err
	}
	if err := s.windowTargets(c, g, in, &w, &out); err != nil {
		return err
	}
	res, err := predict.ParameterWindow(w.in)
	if err != nil {
		return renamed(err, windowFieldNames)
	}
	out.fill(res)
	return c.JSON(http.StatusOK, out)
}
