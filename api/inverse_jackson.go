package api

import (
	"fmt"
	"net/http"

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
		PenetrationMM: u.req("penetration_mm", in.PenetrationMM), TravelSpeedMMPerS: in.TravelSpeedMMPerS, WireDiameterMM: in.WireDiameterMM,
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
	Notes               []string       `json:"notes"`
	Caution             string         `json:"caution"`
}

// handleInversePenetration answers POST /v1/inverse/penetration.
func (s *Server) handleInversePenetration(c echo.Context) error {
	in, q, err := bindMetric[penetrationInverse, penetrationInverseIn](s, c)
	if err != nil {
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
	if free != nil && free.Fit.Penetration != nil {
		out, err := inverseFree(*free, q)
		if err != nil {
			return err
		}
		return c.JSON(http.StatusOK, out)
	}
	k, cal, err := s.jacksonKFor(c, g, q.JacksonK)
	if err != nil {
		return err
	}
	if k == nil {
		return badRequest("jackson_k", "is required: give it, or the group of an active jackson_fixed calibration")
	}
	out := penetrationInverseOut{SolveFor: q.SolveFor, Notes: []string{}, Caution: predictionCaution}
	if q.JacksonK != nil { // say which calibration the explicit K was preferred to
		passed, err := s.activeCalibration(c, g, db.CalibrationJacksonFree, db.CalibrationJacksonFixed)
		if err != nil {
			return err
		}
		if passed != nil {
			out.Notes = append(out.Notes, "the group's active calibration "+passed.ID.String()+" was not used: the request's jackson_k was")
		}
	}
	if err := solveJackson(*k, q, &out); err != nil {
		return renamed(err, jacksonFieldNames)
	}
	po := &out.Penetration
	po.Source, po.Model = sourceRequest, string(predict.ModelJacksonFixed)
	if cal != nil {
		po.Source, po.Model, po.CalibrationID = sourceCalibration, string(db.CalibrationJacksonFixed), &cal.ID
	}
	po.Exponents = &exponentsOut{predict.JacksonCurrentExponent, predict.JacksonTravelExponent, predict.JacksonVoltageExponent}
	if err := po.setK(*k); err != nil {
		return err
	}
	p, err := predict.PenetrationMM(*k, out.CurrentA, out.TravelSpeedMMPerS, out.VoltageV)
	if err != nil {
		return err
	}
	po.PenetrationMM, po.PenetrationIn = &p, ptrTo(predict.MMToInch(p))
	finishInverse(&out)
	return c.JSON(http.StatusOK, out)
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
