package api

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/predict"
)

// holdIn asks for the current that keeps Jackson penetration unchanged when
// travel speed and/or voltage change (K cancels, so none is needed).
type holdIn struct {
	CurrentA               float64  `json:"current_a"`
	VoltageV               float64  `json:"voltage_v"`
	NewVoltageV            *float64 `json:"new_voltage_v"`
	TravelSpeedMMPerS      *float64 `json:"travel_speed_mm_s"`
	TravelSpeedMMPerMin    *float64 `json:"travel_speed_mm_min"`
	TravelSpeedInPerMin    *float64 `json:"travel_speed_in_min"`
	NewTravelSpeedMMPerS   *float64 `json:"new_travel_speed_mm_s"`
	NewTravelSpeedMMPerMin *float64 `json:"new_travel_speed_mm_min"`
	NewTravelSpeedInPerMin *float64 `json:"new_travel_speed_in_min"`
}

// hold is the request in metric units, validated; it is also the answer's echo.
type hold struct {
	CurrentA             float64 `json:"current_a" validate:"required,gte=10,lte=1000"`
	VoltageV             float64 `json:"voltage_v" validate:"required,gte=5,lte=60"`
	NewVoltageV          float64 `json:"new_voltage_v" validate:"required,gte=5,lte=60"`
	TravelSpeedMMPerS    float64 `json:"travel_speed_mm_s" validate:"required,gte=0.5,lte=30"`
	NewTravelSpeedMMPerS float64 `json:"new_travel_speed_mm_s" validate:"required,gte=0.5,lte=30"`
}

func (in holdIn) metric() (hold, error) {
	var u units
	h := hold{CurrentA: in.CurrentA, VoltageV: in.VoltageV, NewVoltageV: in.VoltageV,
		TravelSpeedMMPerS: u.req(mmPerS("travel_speed_mm_s", in.TravelSpeedMMPerS),
			mmPerMin("travel_speed_mm_min", in.TravelSpeedMMPerMin), inPerMin("travel_speed_in_min", in.TravelSpeedInPerMin))}
	h.NewTravelSpeedMMPerS = h.TravelSpeedMMPerS
	if s := u.opt(mmPerS("new_travel_speed_mm_s", in.NewTravelSpeedMMPerS),
		mmPerMin("new_travel_speed_mm_min", in.NewTravelSpeedMMPerMin), inPerMin("new_travel_speed_in_min", in.NewTravelSpeedInPerMin)); s != nil {
		h.NewTravelSpeedMMPerS = *s
	} else if in.NewVoltageV == nil {
		u.issues = append(u.issues, FieldIssue{"new_travel_speed_mm_s", "give the change: a new travel speed and/or new_voltage_v"})
	}
	if in.NewVoltageV != nil {
		h.NewVoltageV = *in.NewVoltageV
	}
	return h, u.err()
}

// holdOut is the current that holds penetration, and the arc energy before
// and after (penetration held does not mean heat input held).
type holdOut struct {
	hold
	NewCurrentA       float64 `json:"new_current_a"`
	NewTravelSpeedIPM float64 `json:"new_travel_speed_in_min"`
	ArcEnergyJMM      float64 `json:"arc_energy_j_mm"`
	NewArcEnergyJMM   float64 `json:"new_arc_energy_j_mm"`
	Note              string  `json:"note"`
	Caution           string  `json:"caution"`
}

const holdNote = "holds Jackson penetration P = K·I^(4/3)·S^(−1/3)·V^(−2/3) with the published exponents; K cancels"

// handleInverseHold answers POST /v1/inverse/hold-penetration.
func (s *Server) handleInverseHold(c echo.Context) error {
	_, h, err := bindMetric[hold, holdIn](s, c)
	if err != nil {
		return err
	}
	i2, err := predict.HoldPenetrationCurrentA(h.CurrentA, h.TravelSpeedMMPerS, h.NewTravelSpeedMMPerS, h.VoltageV, h.NewVoltageV)
	if err != nil {
		return err
	}
	out := holdOut{hold: h, NewCurrentA: i2, NewTravelSpeedIPM: predict.MMPerSToInPerMin(h.NewTravelSpeedMMPerS),
		Note: holdNote, Caution: predictionCaution}
	if out.ArcEnergyJMM, err = predict.ArcEnergyJPerMM(h.VoltageV, h.CurrentA, h.TravelSpeedMMPerS); err != nil {
		return err
	}
	if out.NewArcEnergyJMM, err = predict.ArcEnergyJPerMM(h.NewVoltageV, i2, h.NewTravelSpeedMMPerS); err != nil {
		return err
	}
	return c.JSON(http.StatusOK, out)
}
