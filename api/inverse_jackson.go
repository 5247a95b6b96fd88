package api

import (
	"fmt"
	"math"
	"net/http"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// penetrationInverseIn asks for the current, voltage or travel speed that
// gives a target Jackson penetration with the other two given. The model is
// the group's active jackson_free calibration (its own exponents), else K of
// its active jackson_fixed calibration, else the caller's K.
type penetrationInverseIn struct {
	groupFields
	ProcedureID       *uuid.UUID  `json:"procedure_id"`
	Basis             string      `json:"basis"`
	SolveFor          string      `json:"solve_for"`
	PenetrationMM     *float64    `json:"penetration_mm"`
	CurrentA          *float64    `json:"current_a"`
	VoltageV          *float64    `json:"voltage_v"`
	TravelSpeedMMPerS *float64    `json:"travel_speed_mm_s"`
	WireDiameterMM    *float64    `json:"wire_diameter_mm"`
	JacksonK          *jacksonKIn `json:"jackson_k"`
}

// penetrationInverse is the request in metric units, validated.
type penetrationInverse struct {
	Basis             string      `json:"basis"`
	SolveFor          string      `json:"solve_for" validate:"required,oneof=current voltage travel_speed"`
	PenetrationMM     float64     `json:"penetration_mm" validate:"required,quantity"`
	CurrentA          *float64    `json:"current_a" validate:"omitempty,quantity"`
	VoltageV          *float64    `json:"voltage_v" validate:"omitempty,quantity"`
	TravelSpeedMMPerS *float64    `json:"travel_speed_mm_s" validate:"omitempty,quantity"`
	WireDiameterMM    *float64    `json:"wire_diameter_mm" validate:"omitempty,quantity"`
	JacksonK          *jacksonKIn `json:"jackson_k"`
}

func (in penetrationInverseIn) metric() (penetrationInverse, error) {
	var u units
	q := penetrationInverse{SolveFor: in.SolveFor, CurrentA: in.CurrentA, VoltageV: in.VoltageV, JacksonK: in.JacksonK,
		TravelSpeedMMPerS: in.TravelSpeedMMPerS, WireDiameterMM: in.WireDiameterMM, Basis: in.Basis,
	}
	switch { // with a procedure, its required minimum is the default target
	case in.PenetrationMM != nil:
		q.PenetrationMM = *in.PenetrationMM
	case in.ProcedureID == nil:
		u.missing("penetration_mm")
	}
	for _, v := range []struct {
		name  string
		given bool
	}{{"current", q.CurrentA != nil}, {"voltage", q.VoltageV != nil}, {"travel_speed", q.TravelSpeedMMPerS != nil}} {
		field := map[string]string{"current": "current_a", "voltage": "voltage_v", "travel_speed": "travel_speed_mm_s"}[v.name]
		switch {
		case v.name == q.SolveFor && v.given:
			u.issues = append(u.issues, FieldIssue{field, "is what solve_for asks for; leave it out"})
		case v.name != q.SolveFor && !v.given && q.SolveFor != "":
			u.issues = append(u.issues, FieldIssue{field, "is required when solving for " + q.SolveFor})
		}
	}
	return q, u.err()
}

// penetrationInverseOut is the full setting with the solved quantity filled
// in, the penetration the forward model gives there and the K used.
type penetrationInverseOut struct {
	SolveFor            string         `json:"solve_for"`
	CurrentA            float64        `json:"current_a"`
	VoltageV            float64        `json:"voltage_v"`
	TravelSpeedMMPerS   float64        `json:"travel_speed_mm_s"`
	TravelSpeedInPerMin float64        `json:"travel_speed_in_min"`
	Penetration         penetrationOut `json:"penetration"`
	// Basis is how the target was met: lower_bound (the prediction
	// interval's lower end at PenetrationLevel equals the target, LowerBoundMM)
	// or median.
	Basis            string   `json:"basis"`
	PenetrationLevel *float64 `json:"penetration_level,omitempty"`
	LowerBoundMM     *float64 `json:"lower_bound_mm,omitempty"`
	// For a procedure: where the target and group came from, and whether
	// the solved setting lies inside its qualified ranges.
	ProcedureID            *uuid.UUID        `json:"procedure_id,omitempty"`
	LimitsFrom             map[string]string `json:"limits_from,omitempty"`
	WithinQualifiedRanges  *bool             `json:"within_qualified_ranges,omitempty"`
	OutsideQualifiedRanges []string          `json:"outside_qualified_ranges,omitempty"`
	Notes                  []string          `json:"notes"`
	Caution                string            `json:"caution"`
}

// handleInversePenetration answers POST /v1/inverse/penetration.
func (s *Server) handleInversePenetration(c echo.Context) error {
	var in penetrationInverseIn
	if err := bind(c, &in); err != nil {
		return err
	}
	q, err := in.metric()
	if err != nil {
		return err
	}
	var lim *procedureLimits
	limitsFrom := map[string]string{}
	if in.ProcedureID != nil {
		if lim, err = s.procedureLimitsOf(c, *in.ProcedureID); err != nil {
			return err
		}
		got, from := lim.minPenetration(in.PenetrationMM)
		if got == nil {
			return badRequest("penetration_mm", "is required: the procedure states no minimum penetration")
		}
		q.PenetrationMM, limitsFrom["penetration_mm"] = *got, from
		lim.group(&in.groupFields, &q.WireDiameterMM, limitsFrom)
	}
	if err := s.check(q); err != nil {
		return err
	}
	g, err := s.calibrationGroup(in.groupFields, q.WireDiameterMM)
	if err != nil {
		return err
	}
	var free *db.Calibration
	if q.JacksonK == nil { // an explicit K is used exactly; else the group's calibration in use
		if free, err = s.activeCalibration(c, g, db.CalibrationJacksonFree); err != nil {
			return err
		}
	}
	var solve func(q penetrationInverse) (penetrationInverseOut, error)
	var cal *db.Calibration // the calibration solved with; nil: the request's K
	var notes []string
	if free != nil && free.Fit.Penetration != nil {
		cal = free
		solve = func(q penetrationInverse) (penetrationInverseOut, error) { return inverseFree(*free, q) }
	} else {
		k, fixed, err := s.jacksonKFor(c, g, q.JacksonK)
		if err != nil {
			return err
		}
		if k == nil {
			return badRequest("jackson_k", "is required: give it, or the group of an active jackson_fixed calibration")
		}
		if q.JacksonK != nil { // say which calibration the explicit K was preferred to
			passed, err := s.activeCalibration(c, g, db.CalibrationJacksonFree, db.CalibrationJacksonFixed)
			if err != nil {
				return err
			}
			if passed != nil {
				notes = append(notes, "the group's active calibration "+passed.ID.String()+" was not used: the request's jackson_k was")
			}
		}
		cal = fixed
		solve = func(q penetrationInverse) (penetrationInverseOut, error) { return inverseK(*k, fixed, q) }
	}
	out, err := solveOnBasis(solve, cal, q)
	if err != nil {
		return err
	}
	out.Notes = append(out.Notes, notes...)
	if lim != nil {
		values := map[string]float64{"current_a": out.CurrentA, "voltage_v": out.VoltageV, "travel_speed_mm_s": out.TravelSpeedMMPerS}
		inside, outside := lim.inside(values)
		out.ProcedureID, out.LimitsFrom, out.WithinQualifiedRanges, out.OutsideQualifiedRanges = &lim.proc.ID, limitsFrom, &inside, outside
		if lim.stale != "" {
			out.Notes = append(out.Notes, "the qualified ranges may be out of date: "+lim.stale)
		}
	}
	return c.JSON(http.StatusOK, out)
}

// solveOnBasis solves for the setting whose penetration meets the target:
// on the median when the model has no interval (a request's K) or median
// is asked for; else, by default, so that the lower end of the
// calibration's prediction interval at its level equals the target (the
// safe side), by iterating the median target T ← T·P/P_low, which converges
// because the interval's relative width changes slowly with the setting.
func solveOnBasis(solve func(penetrationInverse) (penetrationInverseOut, error), cal *db.Calibration, q penetrationInverse) (penetrationInverseOut, error) {
	if cal == nil && q.Basis == predict.BasisLowerBound {
		return penetrationInverseOut{}, unprocessable(FieldIssue{"basis", "lower_bound needs a calibration with a prediction interval; a jackson_k has none"})
	}
	if cal == nil || cal.Fit.Penetration == nil || q.Basis == predict.BasisMedian {
		out, err := solve(q)
		out.Basis = predict.BasisMedian
		return out, err
	}
	want, target := q.PenetrationMM, q.PenetrationMM
	var out penetrationInverseOut
	for range 60 {
		q.PenetrationMM = target
		var err error
		if out, err = solve(q); err != nil {
			return out, err
		}
		iv, err := cal.Fit.Penetration.Predict(out.CurrentA, out.VoltageV, out.TravelSpeedMMPerS, cal.Level)
		if err != nil {
			return out, err
		}
		out.LowerBoundMM = ptrTo(iv.PredLowMM)
		if math.Abs(iv.PredLowMM-want) <= 1e-10*want {
			break
		}
		target *= want / iv.PredLowMM
	}
	out.Basis, out.PenetrationLevel = predict.BasisLowerBound, ptrTo(cal.Level)
	return out, nil
}

// inverseK solves with K and the published exponents: the request's K
// (cal nil) or that of the group's active jackson_fixed calibration.
func inverseK(k predict.JacksonK, cal *db.Calibration, q penetrationInverse) (penetrationInverseOut, error) {
	out := penetrationInverseOut{SolveFor: q.SolveFor, Notes: []string{}, Caution: predictionCaution}
	if err := solveJackson(k, q, &out); err != nil {
		return out, renamed(err, jacksonFieldNames)
	}
	po := &out.Penetration
	po.Source, po.Model = sourceRequest, string(predict.ModelJacksonFixed)
	if cal != nil {
		po.Source, po.Model, po.CalibrationID = sourceCalibration, string(db.CalibrationJacksonFixed), &cal.ID
	}
	po.Exponents = &exponentsOut{predict.JacksonCurrentExponent, predict.JacksonTravelExponent, predict.JacksonVoltageExponent}
	if err := po.setK(k); err != nil {
		return out, err
	}
	p, err := predict.PenetrationMM(k, out.CurrentA, out.TravelSpeedMMPerS, out.VoltageV)
	if err != nil {
		return out, err
	}
	po.PenetrationMM, po.PenetrationIn = &p, ptrTo(predict.MMToInch(p))
	if cal != nil { // the calibration's interval at the solution, at the default level
		iv, err := cal.Fit.Penetration.Predict(out.CurrentA, out.VoltageV, out.TravelSpeedMMPerS, defaultLevel)
		if err == nil {
			po.Interval = &iv
		}
	}
	finishInverse(&out)
	return out, nil
}

// inverseFree solves with the shop's own exponents of an active jackson_free
// calibration; the penetration reported is the fit's median at the solution,
// with its intervals at the default level.
func inverseFree(cal db.Calibration, q penetrationInverse) (penetrationInverseOut, error) {
	fit := *cal.Fit.Penetration
	out := penetrationInverseOut{SolveFor: q.SolveFor, Notes: []string{}, Caution: predictionCaution}
	var err error
	switch q.SolveFor {
	case "current":
		out.VoltageV, out.TravelSpeedMMPerS = *q.VoltageV, *q.TravelSpeedMMPerS
		out.CurrentA, err = fit.CurrentForPenetrationA(q.PenetrationMM, out.TravelSpeedMMPerS, out.VoltageV)
	case "voltage":
		out.CurrentA, out.TravelSpeedMMPerS = *q.CurrentA, *q.TravelSpeedMMPerS
		out.VoltageV, err = fit.VoltageForPenetrationV(q.PenetrationMM, out.CurrentA, out.TravelSpeedMMPerS)
	default:
		out.CurrentA, out.VoltageV = *q.CurrentA, *q.VoltageV
		out.TravelSpeedMMPerS, err = fit.TravelSpeedForPenetrationMMPerS(q.PenetrationMM, out.CurrentA, out.VoltageV)
	}
	if err != nil {
		return out, renamed(err, freeFieldNames)
	}
	iv, err := fit.Predict(out.CurrentA, out.VoltageV, out.TravelSpeedMMPerS, defaultLevel)
	if err != nil {
		return out, err
	}
	po := &out.Penetration
	po.Source, po.Model, po.CalibrationID = sourceCalibration, string(cal.Model), &cal.ID
	po.Exponents = &exponentsOut{fit.Coef[1], fit.Coef[2], fit.Coef[3]}
	po.PenetrationMM, po.PenetrationIn, po.Interval = &iv.MedianMM, ptrTo(predict.MMToInch(iv.MedianMM)), &iv
	finishInverse(&out)
	return out, nil
}

// freeFieldNames maps a jackson_free inverse's refusals to request fields:
// an exponent of about zero makes solve_for unanswerable, an unreachable
// target is the penetration's fault.
var freeFieldNames = map[string]string{
	"jackson_free current exponent": "solve_for", "jackson_free voltage exponent": "solve_for",
	"jackson_free travel speed exponent": "solve_for", "penetration mm": "penetration_mm",
}

// finishInverse adds the inch travel speed and flags a setting outside the
// plausible bounds.
func finishInverse(out *penetrationInverseOut) {
	out.TravelSpeedInPerMin = predict.MMPerSToInPerMin(out.TravelSpeedMMPerS)
	for _, b := range []struct {
		name string
		v    float64
	}{{"current_a", out.CurrentA}, {"voltage_v", out.VoltageV}, {"travel_speed_mm_s", out.TravelSpeedMMPerS}} {
		if q := predict.MustQuantity(b.name); !q.Inside(b.v) {
			out.Notes = append(out.Notes, fmt.Sprintf("%s = %.4g is outside its plausible range %s: no usual weld gives this penetration with the other two held", b.name, b.v, q.BoundsText()))
		}
	}
}

// solveJackson fills the setting with the quantity q solves for.
func solveJackson(k predict.JacksonK, q penetrationInverse, out *penetrationInverseOut) error {
	var err error
	switch q.SolveFor {
	case "current":
		out.VoltageV, out.TravelSpeedMMPerS = *q.VoltageV, *q.TravelSpeedMMPerS
		out.CurrentA, err = predict.JacksonCurrentA(k, q.PenetrationMM, out.TravelSpeedMMPerS, out.VoltageV)
	case "voltage":
		out.CurrentA, out.TravelSpeedMMPerS = *q.CurrentA, *q.TravelSpeedMMPerS
		out.VoltageV, err = predict.JacksonVoltageV(k, q.PenetrationMM, out.CurrentA, out.TravelSpeedMMPerS)
	default:
		out.CurrentA, out.VoltageV = *q.CurrentA, *q.VoltageV
		out.TravelSpeedMMPerS, err = predict.JacksonTravelSpeedMMPerS(k, q.PenetrationMM, out.CurrentA, out.VoltageV)
	}
	return err
}
