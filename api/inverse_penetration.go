package api

import (
	"net/http"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// holdIn asks for the current that keeps Jackson penetration unchanged when
// travel speed and/or voltage change (K cancels, so none is needed). With a
// group that has an active jackson_free calibration, its exponents are used.
type holdIn struct {
	groupFields
	CurrentA             float64  `json:"current_a"`
	VoltageV             float64  `json:"voltage_v"`
	NewVoltageV          *float64 `json:"new_voltage_v"`
	TravelSpeedMMPerS    *float64 `json:"travel_speed_mm_s"`
	NewTravelSpeedMMPerS *float64 `json:"new_travel_speed_mm_s"`
	WireDiameterMM       *float64 `json:"wire_diameter_mm"`
}

// hold is the request in metric units, validated; it is also the answer's echo.
type hold struct {
	CurrentA             float64  `json:"current_a" validate:"required,quantity"`
	VoltageV             float64  `json:"voltage_v" validate:"required,quantity"`
	NewVoltageV          float64  `json:"new_voltage_v" validate:"required,quantity"`
	TravelSpeedMMPerS    float64  `json:"travel_speed_mm_s" validate:"required,quantity"`
	NewTravelSpeedMMPerS float64  `json:"new_travel_speed_mm_s" validate:"required,quantity"`
	WireDiameterMM       *float64 `json:"wire_diameter_mm,omitempty" validate:"omitempty,quantity"`
}

func (in holdIn) metric() (hold, error) {
	var u units
	h := hold{CurrentA: in.CurrentA, VoltageV: in.VoltageV, NewVoltageV: in.VoltageV,
		TravelSpeedMMPerS: u.req("travel_speed_mm_s", in.TravelSpeedMMPerS), WireDiameterMM: in.WireDiameterMM}
	h.NewTravelSpeedMMPerS = h.TravelSpeedMMPerS
	if s := in.NewTravelSpeedMMPerS; s != nil {
		h.NewTravelSpeedMMPerS = *s
	} else if in.NewVoltageV == nil {
		u.issues = append(u.issues, FieldIssue{"new_travel_speed_mm_s", "give the change: a new travel speed and/or new_voltage_v"})
	}
	if in.NewVoltageV != nil {
		h.NewVoltageV = *in.NewVoltageV
	}
	return h, u.err()
}

// holdOut is the current that holds penetration, the model that held it,
// and the arc energy before and after (penetration held does not mean heat
// input held).
type holdOut struct {
	hold
	NewCurrentA              float64      `json:"new_current_a"`
	NewTravelSpeedIPM        float64      `json:"new_travel_speed_in_min"`
	ArcEnergyJMM             float64      `json:"arc_energy_j_mm"`
	NewArcEnergyJMM          float64      `json:"new_arc_energy_j_mm"`
	PenetrationSource        string       `json:"penetration_source"`
	PenetrationModel         string       `json:"penetration_model"`
	PenetrationCalibrationID *uuid.UUID   `json:"penetration_calibration_id,omitempty"`
	Exponents                exponentsOut `json:"exponents"`
	Note                     string       `json:"note"`
	Caution                  string       `json:"caution"`
}

const (
	holdNote     = "holds Jackson penetration P = K·I^(4/3)·S^(−1/3)·V^(−2/3) with the published exponents; K cancels"
	holdFreeNote = "holds the median penetration ln P = c0 + a·ln I + b·ln S + c·ln V of the group's active jackson_free calibration; c0 cancels"
)

// sourcePublished reports a hold made with the published exponents alone:
// K cancels, so neither a calibration nor the caller supplies a coefficient.
const sourcePublished = "published"

// holdFieldNames maps a jackson_free hold's refusals to request fields.
var holdFieldNames = map[string]string{"jackson_free current exponent": "current_a", "current A": "current_a"}

// handleInverseHold answers POST /v1/inverse/hold-penetration.
func (s *Server) handleInverseHold(c echo.Context) error {
	in, h, err := bindMetric[hold, holdIn](s, c)
	if err != nil {
		return err
	}
	g, err := s.calibrationGroup(in.groupFields, h.WireDiameterMM)
	if err != nil {
		return err
	}
	free, err := s.activeCalibration(c, g, db.CalibrationJacksonFree)
	if err != nil {
		return err
	}
	out := holdOut{hold: h, NewTravelSpeedIPM: predict.MMPerSToInPerMin(h.NewTravelSpeedMMPerS), Caution: predictionCaution,
		PenetrationSource: sourceCalibration, PenetrationModel: string(predict.ModelJacksonFixed), Note: holdNote,
		Exponents: exponentsOut{predict.JacksonCurrentExponent, predict.JacksonTravelExponent, predict.JacksonVoltageExponent}}
	var i2 float64
	if free != nil && free.Fit.Penetration != nil {
		fit := free.Fit.Penetration
		if i2, err = fit.HoldPenetrationCurrentA(h.CurrentA, h.TravelSpeedMMPerS, h.NewTravelSpeedMMPerS, h.VoltageV, h.NewVoltageV); err != nil {
			return renamed(err, holdFieldNames)
		}
		out.PenetrationModel, out.PenetrationCalibrationID, out.Note = string(free.Model), &free.ID, holdFreeNote
		out.Exponents = exponentsOut{fit.Coef[1], fit.Coef[2], fit.Coef[3]}
	} else {
		out.PenetrationSource = sourcePublished
		if i2, err = predict.HoldPenetrationCurrentA(h.CurrentA, h.TravelSpeedMMPerS, h.NewTravelSpeedMMPerS, h.VoltageV, h.NewVoltageV); err != nil {
			return err
		}
	}
	out.NewCurrentA = i2
	if out.ArcEnergyJMM, err = predict.ArcEnergyJPerMM(h.VoltageV, h.CurrentA, h.TravelSpeedMMPerS); err != nil {
		return err
	}
	if out.NewArcEnergyJMM, err = predict.ArcEnergyJPerMM(h.NewVoltageV, i2, h.NewTravelSpeedMMPerS); err != nil {
		return err
	}
	return c.JSON(http.StatusOK, out)
}
