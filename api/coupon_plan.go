package api

import (
	"context"
	"errors"
	"fmt"
	"math"
	"net/http"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// couponPlanIn asks which coupons to weld next for a calibration of the
// group a procedure welds (its process, wire and gas, and the joint type
// given): the model, how many, the step sizes the machines are set in,
// narrower ranges than the procedure's, a heat input limit and a production
// setting whose prediction should narrow most. Metric units only.
type couponPlanIn struct {
	ProcedureID           *uuid.UUID          `json:"procedure_id,omitempty"`
	Model                 db.CalibrationModel `json:"model,omitempty"`
	JointType             *string             `json:"joint_type,omitempty"`
	Count                 *int                `json:"count,omitempty"`
	CurrentA              *rangeIn            `json:"current_a,omitempty"`
	VoltageV              *rangeIn            `json:"voltage_v,omitempty"`
	TravelSpeedMMPerS     *rangeIn            `json:"travel_speed_mm_s,omitempty"`
	CTWDMM                *rangeIn            `json:"ctwd_mm,omitempty"`
	CurrentStepA          *float64            `json:"current_step_a,omitempty"`
	VoltageStepV          *float64            `json:"voltage_step_v,omitempty"`
	TravelSpeedStepMMPerS *float64            `json:"travel_speed_step_mm_s,omitempty"`
	CTWDStepMM            *float64            `json:"ctwd_step_mm,omitempty"`
	ArcLengthMM           *float64            `json:"arc_length_mm,omitempty"`
	MaxHeatInputJMM       *float64            `json:"max_heat_input_j_mm,omitempty"`
	HeatInputForm         string              `json:"heat_input_form,omitempty"`
	ThermalEfficiency     *float64            `json:"thermal_efficiency,omitempty"`
	At                    *settingIn          `json:"at,omitempty"`
}

// settingIn is one welding setting (a production operating point).
type settingIn struct {
	CurrentA          float64  `json:"current_a"`
	VoltageV          float64  `json:"voltage_v"`
	TravelSpeedMMPerS float64  `json:"travel_speed_mm_s"`
	CTWDMM            *float64 `json:"ctwd_mm,omitempty"`
}

// proposalOut is one proposed coupon setting with its expected effect.
type proposalOut struct {
	CurrentA          float64                     `json:"current_a"`
	VoltageV          float64                     `json:"voltage_v"`
	TravelSpeedMMPerS float64                     `json:"travel_speed_mm_s"`
	CTWDMM            *float64                    `json:"ctwd_mm,omitempty"`
	DetGain           *float64                    `json:"det_gain,omitempty"`
	Coefficients      []predict.CoefficientShrink `json:"coefficients"`
}

// targetOut is the coupon that most narrows the prediction at a production setting.
type targetOut struct {
	proposalOut
	At           settingIn `json:"at"`
	FactorBefore float64   `json:"variance_factor_before"`
	FactorAfter  float64   `json:"variance_factor_after"`
	MeanSEBefore *float64  `json:"mean_se_before,omitempty"`
	MeanSEAfter  *float64  `json:"mean_se_after,omitempty"`
	PredSDBefore *float64  `json:"prediction_sd_before,omitempty"`
	PredSDAfter  *float64  `json:"prediction_sd_after,omitempty"`
}

// couponPlanOut is the answer: the proposals, what they were chosen from
// and the caution every prediction carries.
type couponPlanOut struct {
	ProcedureID    uuid.UUID           `json:"procedure_id"`
	Model          db.CalibrationModel `json:"model"`
	Group          db.CalibrationGroup `json:"group"`
	CouponsUsed    int                 `json:"coupons_used"`
	ResidualSD     *float64            `json:"residual_sd,omitempty"`
	Unit           string              `json:"unit"`
	StartingDesign bool                `json:"starting_design"`
	Basis          string              `json:"basis"`
	Candidates     int                 `json:"candidates"`
	LimitsFrom     map[string]string   `json:"limits_from"`
	Proposals      []proposalOut       `json:"proposals"`
	Target         *targetOut          `json:"target,omitempty"`
	Notes          []string            `json:"notes"`
	Caution        string              `json:"caution"`
}

// planFieldNames maps predict's input names to the request's.
var planFieldNames = map[string]string{
	"current A range min": "current_a.min", "current A range max": "current_a.max", "current A range": "current_a",
	"arc voltage V range min": "voltage_v.min", "arc voltage V range max": "voltage_v.max", "arc voltage V range": "voltage_v",
	"travel speed mm/s range min": "travel_speed_mm_s.min", "travel speed mm/s range max": "travel_speed_mm_s.max",
	"travel speed mm/s range": "travel_speed_mm_s", "electrode extension mm range": "ctwd_mm",
	"electrode extension mm range min": "ctwd_mm.min", "electrode extension mm range max": "ctwd_mm.max",
	"current A step": "current_step_a", "arc voltage V step": "voltage_step_v", "travel speed mm/s step": "travel_speed_step_mm_s",
	"electrode extension mm step": "ctwd_step_mm", "count": "count", "ranges": "procedure_id", "steps": "current_step_a",
	"current A": "at.current_a", "arc voltage V": "at.voltage_v", "travel speed mm/s": "at.travel_speed_mm_s",
	"electrode extension mm": "at.ctwd_mm", "heat input form": "heat_input_form",
}

// handleCouponPlanProposals answers POST /v1/coupon-plans/proposals.
func (s *Server) handleCouponPlanProposals(c echo.Context) error {
	var in couponPlanIn
	if err := bind(c, &in); err != nil {
		return err
	}
	out, _, err := s.proposeCoupons(c, in)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, out)
}

// proposeCoupons checks the request, reads the procedure's ranges and the
// group's coupons, and plans. It also returns the predict input it planned from.
func (s *Server) proposeCoupons(c echo.Context, in couponPlanIn) (couponPlanOut, predict.PlanInput, error) {
	var pin predict.PlanInput
	var u issues
	if in.ProcedureID == nil {
		u.missing("procedure_id", "names the procedure whose qualified ranges bound the plan")
	}
	if in.JointType == nil {
		u.missing("joint_type", "is part of the calibration group")
	}
	if in.Model == "" {
		u.missing("model", "jackson_fixed, jackson_free or lesnewich")
	}
	if err := u.err(); err != nil {
		return couponPlanOut{}, pin, err
	}
	model, ok := predictModels[in.Model]
	if !ok {
		return couponPlanOut{}, pin, unprocessable(FieldIssue{"model", fmt.Sprintf("%q is not jackson_fixed, jackson_free or lesnewich", in.Model)})
	}
	if err := s.check(groupFields{JointType: in.JointType}); err != nil {
		return couponPlanOut{}, pin, err
	}
	l, err := s.procedureLimitsOf(c, *in.ProcedureID)
	if err != nil {
		return couponPlanOut{}, pin, err
	}
	ctx, site := c.Request().Context(), actorOf(c).Site
	g := db.CalibrationGroup{Process: l.proc.Process, WireDiameterMM: l.proc.WireDiameterMM, ShieldingGas: l.proc.ShieldingGas, JointType: *in.JointType}
	out := couponPlanOut{ProcedureID: *in.ProcedureID, Model: in.Model, Group: g, LimitsFrom: map[string]string{},
		Notes: []string{}, Caution: predictionCaution, Unit: "ln(mm)"}
	pin = predict.PlanInput{Model: model, Count: 3}
	if in.Count != nil {
		pin.Count = *in.Count
	}
	if err := planSpace(l, in, &pin.Space, &out); err != nil {
		return out, pin, err
	}
	arc, err := s.planArcLength(ctx, site, g, in, &out)
	if err != nil {
		return out, pin, err
	}
	if model == predict.ModelLesnewich {
		if err := planExtension(l, in, arc, &pin.Space, &out); err != nil {
			return out, pin, err
		}
	}
	if err := s.planCoupons(ctx, site, g, arc, &pin, &out); err != nil {
		return out, pin, err
	}
	if in.At != nil {
		at := predict.DesignPoint{CurrentA: in.At.CurrentA, VoltageV: in.At.VoltageV, TravelSpeedMMPerS: in.At.TravelSpeedMMPerS}
		if in.At.CTWDMM != nil {
			at.ExtensionMM = *in.At.CTWDMM - arc
		} else if model == predict.ModelLesnewich {
			return out, pin, badRequest("at.ctwd_mm", "is required to plan melting-rate coupons at a production setting")
		}
		pin.Target = &at
	}
	if l.stale != "" {
		out.Notes = append(out.Notes, "the qualified ranges may be out of date: "+l.stale)
	}
	if pin.ResidualSD > 0 {
		out.ResidualSD = ptrTo(pin.ResidualSD)
	}
	plan, err := predict.PlanCoupons(pin)
	if err != nil {
		return out, pin, renamed(err, planFieldNames)
	}
	out.fill(plan, arc, in.At)
	return out, pin, nil
}

// planSpace fills the design space from the procedure's ranges (narrowed by
// the request's), the steps and the heat input limit.
func planSpace(l *procedureLimits, in couponPlanIn, sp *predict.DesignSpace, out *couponPlanOut) error {
	var refused []FieldIssue
	for _, r := range []struct {
		field string
		given *rangeIn
		dst   *predict.Range
	}{{"current_a", in.CurrentA, &sp.CurrentA}, {"voltage_v", in.VoltageV, &sp.VoltageV}, {"travel_speed_mm_s", in.TravelSpeedMMPerS, &sp.TravelSpeedMMPerS}} {
		got, from := l.merge(r.field, r.given.rng())
		if got == nil {
			refused = append(refused, FieldIssue{r.field, "is required: " + l.from + " has no range of it"})
			continue
		}
		if got.Min > got.Max {
			refused = append(refused, FieldIssue{r.field, fmt.Sprintf("lies outside the qualified range of %s", l.from)})
			continue
		}
		*r.dst, out.LimitsFrom[r.field] = *got, from
	}
	for _, st := range []struct {
		field string
		v     *float64
		dst   *float64
	}{{"current_step_a", in.CurrentStepA, &sp.Steps.CurrentA}, {"voltage_step_v", in.VoltageStepV, &sp.Steps.VoltageV},
		{"travel_speed_step_mm_s", in.TravelSpeedStepMMPerS, &sp.Steps.TravelSpeedMMPerS}, {"ctwd_step_mm", in.CTWDStepMM, &sp.Steps.ExtensionMM}} {
		if st.v == nil {
			continue
		}
		if !(*st.v > 0) || math.IsInf(*st.v, 0) {
			refused = append(refused, FieldIssue{st.field, "must be a positive step size"})
			continue
		}
		*st.dst = *st.v
	}
	if refused != nil {
		return unprocessable(refused...)
	}
	if in.MaxHeatInputJMM != nil {
		rule, err := heatRuleOf(windowIn{HeatInputForm: in.HeatInputForm, ThermalEfficiency: in.ThermalEfficiency,
			groupFields: groupFields{Process: &l.proc.Process}})
		if err != nil {
			return err
		}
		if !(*in.MaxHeatInputJMM > 0) {
			return unprocessable(FieldIssue{"max_heat_input_j_mm", "must be greater than zero"})
		}
		lim, err := predict.NewWindowLimits(predict.WindowInput{CurrentA: sp.CurrentA, VoltageV: sp.VoltageV, TravelSpeedMMPerS: sp.TravelSpeedMMPerS,
			HeatInput: &predict.HeatInputTarget{MaxJPerMM: *in.MaxHeatInputJMM, Rule: rule}})
		if err != nil {
			return renamed(err, planFieldNames)
		}
		sp.Limits, out.LimitsFrom["max_heat_input_j_mm"] = lim, "request"
	}
	return nil
}

// planArcLength is the arc length that turns CTWD into electrode extension
// for a melting-rate plan: the request's, else the active lesnewich
// calibration's. Jackson plans need none (0).
func (s *Server) planArcLength(ctx context.Context, site string, g db.CalibrationGroup, in couponPlanIn, out *couponPlanOut) (float64, error) {
	if in.Model != db.CalibrationLesnewich {
		return 0, nil
	}
	out.Unit = "kg/h"
	if in.ArcLengthMM != nil {
		if !(*in.ArcLengthMM > 0) {
			return 0, unprocessable(FieldIssue{"arc_length_mm", "must be greater than zero"})
		}
		return *in.ArcLengthMM, nil
	}
	cal, err := s.store.ActiveCalibration(ctx, site, g, db.CalibrationLesnewich)
	switch {
	case errors.Is(err, db.ErrNotFound), err == nil && cal.ArcLengthMM == nil:
		return 0, badRequest("arc_length_mm", "is required: the group has no lesnewich calibration in use to take it from")
	case err != nil:
		return 0, err
	}
	out.LimitsFrom["arc_length_mm"] = "lesnewich calibration " + cal.ID.String()
	return *cal.ArcLengthMM, nil
}
