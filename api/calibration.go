package api

import (
	"context"
	"net/http"
	"strconv"
	"strings"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// calibrationIn is the body of a fit request: the model, the group, which of
// its coupons (welded date range, procedure), the level for diagnostics and,
// for Lesnewich, the arc length subtracted from each coupon's CTWD.
type calibrationIn struct {
	Model          db.CalibrationModel `json:"model"`
	Process        string              `json:"process"`
	WireDiameterMM *float64            `json:"wire_diameter_mm"`
	ShieldingGas   string              `json:"shielding_gas"`
	JointType      string              `json:"joint_type"`
	WeldedFrom     *string             `json:"welded_from"`
	WeldedTo       *string             `json:"welded_to"`
	ProcedureID    *uuid.UUID          `json:"procedure_id"`
	Level          *float64            `json:"level"`
	ArcLengthMM    *float64            `json:"arc_length_mm"`
	Note           string              `json:"note"`
}

func (in calibrationIn) spec() (db.CalibrationSpec, error) {
	var u units
	from, err := dayBound("welded_from", in.WeldedFrom)
	if err != nil {
		return db.CalibrationSpec{}, err
	}
	to, err := dayBound("welded_to", in.WeldedTo)
	if err != nil {
		return db.CalibrationSpec{}, err
	}
	sp := db.CalibrationSpec{Model: in.Model, Process: in.Process, ShieldingGas: in.ShieldingGas, JointType: in.JointType,
		WireDiameterMM: u.req("wire_diameter_mm", in.WireDiameterMM),
		WeldedFrom:     from, WeldedTo: to, ProcedureID: in.ProcedureID, Level: defaultLevel,
		ArcLengthMM: in.ArcLengthMM, Note: in.Note}
	if in.Level != nil {
		sp.Level = *in.Level
	}
	return sp, u.err()
}

// calibrationOut is a calibration with, when read alone, the per-coupon
// diagnostics of its fit (recomputed at its level from its samples, stored
// inline or re-derived from its selection; none above db.InlineSampleLimit
// samples) and its activations.
type calibrationOut struct {
	db.Calibration
	Diagnostics *predict.Diagnostics       `json:"diagnostics,omitempty"`
	Activations []db.CalibrationActivation `json:"activations"`
	GasClass    *gasClassOut               `json:"shielding_gas_class,omitempty"`
	Caution     string                     `json:"caution"`
}

// predictModels maps stored model names to predict's.
var predictModels = map[db.CalibrationModel]predict.ModelKind{
	db.CalibrationJacksonFixed: predict.ModelJacksonFixed,
	db.CalibrationJacksonFree:  predict.ModelJacksonFree,
	db.CalibrationLesnewich:    predict.ModelLesnewich,
}

// withDiagnostics adds the diagnostics of cal's fit.
func withDiagnostics(cal db.Calibration, acts []db.CalibrationActivation) (calibrationOut, error) {
	if cal.Fit.Melting != nil { // both coefficient forms, also for fits stored before the inch-pound one
		cal.Fit.Melting.WithInchPound()
	}
	out := calibrationOut{Calibration: cal, Activations: acts, GasClass: gasClassOf(cal.ShieldingGas), Caution: predictionCaution}
	if out.Activations == nil {
		out.Activations = []db.CalibrationActivation{}
	}
	if cal.Samples == nil {
		return out, nil
	}
	var d predict.Diagnostics
	var err error
	if cal.Model == db.CalibrationLesnewich {
		d, err = predict.DiagnoseMeltingRate(cal.Samples.Melting, cal.Level)
	} else {
		d, err = predict.DiagnosePenetration(cal.Samples.Penetration, predictModels[cal.Model], cal.Level)
	}
	out.Diagnostics = &d
	return out, err
}

// handleCalibrationCreate answers POST /v1/calibrations: fit and store.
func (s *Server) handleCalibrationCreate(c echo.Context) error {
	var in calibrationIn
	if err := bind(c, &in); err != nil {
		return err
	}
	sp, err := in.spec()
	if err != nil {
		return err
	}
	if err := s.check(sp); err != nil {
		return err
	}
	cal, err := s.store.CreateCalibration(c.Request().Context(), actorOf(c), sp)
	if err != nil {
		return err
	}
	out, err := withDiagnostics(cal, nil)
	if err != nil {
		return err
	}
	c.Response().Header().Set(echo.HeaderLocation, "/v1/calibrations/"+cal.ID.String())
	return c.JSON(http.StatusCreated, out)
}

// handleCalibrationGet answers GET /v1/calibrations/{id}.
func (s *Server) handleCalibrationGet(c echo.Context) error {
	id, err := pathID(c)
	if err != nil {
		return err
	}
	ctx, site := c.Request().Context(), actorOf(c).Site
	verify := c.QueryParam("check") == "samples" // the document allows no other value
	cal, err := s.store.CalibrationChecked(ctx, site, id, verify)
	if err != nil {
		return err
	}
	acts, err := s.store.CalibrationActivations(ctx, site, id)
	if err != nil {
		return err
	}
	out, err := withDiagnostics(cal, acts)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, out)
}

// handleCalibrationList answers GET /v1/calibrations.
func (s *Server) handleCalibrationList(c echo.Context) error {
	f := db.CalibrationFilter{Model: db.CalibrationModel(c.QueryParam("model")), Process: c.QueryParam("process"),
		JointType: c.QueryParam("joint_type"), ActiveOnly: c.QueryParam("active") == "true"}
	if c.QueryParams().Has("shielding_gas") {
		f.ShieldingGas = ptrTo(c.QueryParam("shielding_gas"))
	}
	if v := c.QueryParam("wire_diameter_mm"); v != "" {
		d, err := strconv.ParseFloat(v, 64)
		if err != nil {
			return badRequest("wire_diameter_mm", "want a number of mm")
		}
		f.WireDiameterMM = &d
	}
	site := actorOf(c).Site
	return answerList(s, c, "calibrations", func(ctx context.Context, cursor string, limit int) (db.Page[db.Calibration], error) {
		return s.store.Calibrations(ctx, site, f, cursor, limit)
	})
}

// activationIn is the body of an activation: why this calibration is to be used.
type activationIn struct {
	Reason *string `json:"reason"`
}

// handleCalibrationActivate answers POST /v1/calibrations/{id}/activate and
// /deactivate: per group the latest of these events decides which
// calibration (of either Jackson form) is used, or that none is.
func (s *Server) handleCalibrationActivate(c echo.Context) error {
	id, err := pathID(c)
	if err != nil {
		return err
	}
	var in activationIn
	if err := bind(c, &in); err != nil {
		return err
	}
	if in.Reason == nil {
		return badRequest("reason", "is required: say why")
	}
	change := s.store.ActivateCalibration
	if strings.HasSuffix(c.Path(), "/deactivate") {
		change = s.store.DeactivateCalibration
	}
	act, err := change(c.Request().Context(), actorOf(c), id, *in.Reason)
	if err != nil {
		return err
	}
	// An activation or deactivation is a new record (who, when, why): 201, located on its calibration.
	c.Response().Header().Set(echo.HeaderLocation, "/v1/calibrations/"+id.String())
	return c.JSON(http.StatusCreated, act)
}

// fitRefusal is the reason of a refused fit: predict's message, without
// the wrapping of the layers it passed through.
func fitRefusal(err error) string {
	msg := err.Error()
	if i := strings.LastIndex(msg, "predict: "); i >= 0 {
		return msg[i+len("predict: "):]
	}
	return msg
}
