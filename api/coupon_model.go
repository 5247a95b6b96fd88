package api

import (
	"math"
	"net/http"
	"strconv"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// couponModelOut compares one coupon with what its group's active
// penetration calibration predicts at the coupon's current, voltage and
// travel speed, and gives its heat input and deposit area.
type couponModelOut struct {
	CouponID uuid.UUID           `json:"coupon_id"`
	Group    db.CalibrationGroup `json:"group"`
	// Inherited names the group fields taken from the procedure (else the
	// qualification record) because the coupon leaves them out.
	Inherited   []string             `json:"inherited"`
	GasClass    *gasClassOut         `json:"shielding_gas_class,omitempty"`
	Level       float64              `json:"level"`
	Penetration couponPenetrationOut `json:"penetration"`
	heatOut
	Deposit *couponDepositOut `json:"deposit,omitempty"`
	Notes   []string          `json:"notes"`
	Caution string            `json:"caution"`
}

// couponPenetrationOut is predicted against measured penetration. The
// residual is measured − predicted, in ln(mm) (the fit's scale) and in mm;
// the interval is for one new coupon at Level. A coupon that was part of the
// fit is compared with its own fit (not left out).
type couponPenetrationOut struct {
	Source                   string                       `json:"source"`
	Model                    string                       `json:"model,omitempty"`
	CalibrationID            *uuid.UUID                   `json:"calibration_id,omitempty"`
	PredictedMM              *float64                     `json:"predicted_mm,omitempty"`
	Interval                 *predict.PenetrationInterval `json:"prediction_interval,omitempty"`
	Sections                 int                          `json:"sections"`
	MeasuredMeanMM           *float64                     `json:"measured_mean_mm,omitempty"`
	ResidualLn               *float64                     `json:"residual_ln,omitempty"`
	ResidualMM               *float64                     `json:"residual_mm,omitempty"`
	InsidePredictionInterval *bool                        `json:"inside_prediction_interval,omitempty"`
}

// couponDepositOut sets the deposit area the wire feed gives against the
// fused area measured on the sections (their mean, where measured).
type couponDepositOut struct {
	DepositionEfficiency    float64  `json:"deposition_efficiency"`
	DepositAreaMM2          float64  `json:"deposit_area_mm2"`
	FusedAreaSections       int      `json:"fused_area_sections"`
	MeasuredFusedAreaMM2    *float64 `json:"measured_fused_area_mm2,omitempty"`
	DepositToFusedAreaRatio *float64 `json:"deposit_to_fused_area_ratio,omitempty"`
}

// queryFloat reads an optional number query parameter, def when absent.
func queryFloat(c echo.Context, name string, def float64) (float64, error) {
	s := c.QueryParam(name)
	if s == "" {
		return def, nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, badRequest(name, "want a number")
	}
	return v, nil
}

// handleCouponModel answers GET /v1/coupons/{id}/model.
func (s *Server) handleCouponModel(c echo.Context) error {
	id, err := pathID(c)
	if err != nil {
		return err
	}
	level, err := queryFloat(c, "level", defaultLevel)
	if err != nil {
		return err
	}
	eff, err := queryFloat(c, "deposition_efficiency", 1)
	if err != nil {
		return err
	}
	if !(level > 0 && level < 1) {
		return unprocessable(FieldIssue{"level", "must be between 0 and 1 (e.g. 0.95)"})
	}
	if !(eff > 0 && eff <= 1) {
		return unprocessable(FieldIssue{"deposition_efficiency", "must be greater than 0 and at most 1"})
	}
	d, err := s.store.CouponForModel(c.Request().Context(), actorOf(c).Site, id)
	if err != nil {
		return err
	}
	cp := d.Coupon
	out := couponModelOut{CouponID: cp.ID, Group: d.Group, Inherited: d.Inherited, GasClass: gasClassOf(d.Group.ShieldingGas),
		Level: level, Notes: []string{}, Caution: predictionCaution}
	var process *string
	if d.Group.Process != "" {
		process = &d.Group.Process
	}
	if out.heatOut, err = heatAt(cp.VoltageV, cp.CurrentA, cp.TravelSpeedMMPerS, nil, process); err != nil {
		return err
	}
	if err := s.couponPenetration(c, d, &out); err != nil {
		return err
	}
	if cp.WireFeedSpeedMPerMin == nil {
		out.Notes = append(out.Notes, "no deposit area: the coupon has no wire feed speed")
		return c.JSON(http.StatusOK, out)
	}
	a, err := predict.DepositAreaMM2(*cp.WireFeedSpeedMPerMin, cp.WireDiameterMM, eff, cp.TravelSpeedMMPerS)
	if err != nil {
		return err
	}
	out.Deposit = &couponDepositOut{DepositionEfficiency: eff, DepositAreaMM2: a, FusedAreaSections: len(d.FusedAreasMM2)}
	if len(d.FusedAreasMM2) > 0 {
		m := predict.SectionMean(d.FusedAreasMM2)
		out.Deposit.MeasuredFusedAreaMM2, out.Deposit.DepositToFusedAreaRatio = m, ptrTo(a / *m)
	}
	return c.JSON(http.StatusOK, out)
}

// couponPenetration fills the predicted-versus-measured penetration.
func (s *Server) couponPenetration(c echo.Context, d db.CouponModelData, out *couponModelOut) error {
	po := &out.Penetration
	po.Source, po.Sections = sourceNone, len(d.PenetrationsMM)
	if po.Sections > 0 {
		po.MeasuredMeanMM = predict.SectionMean(d.PenetrationsMM)
	} else {
		out.Notes = append(out.Notes, "the coupon has no current macro-etch section")
	}
	var g *db.CalibrationGroup
	if d.Group.Process != "" {
		g = &d.Group
	}
	cal, err := s.activeCalibration(c, g, db.CalibrationJacksonFree, db.CalibrationJacksonFixed)
	if err != nil {
		return err
	}
	if cal == nil || cal.Fit.Penetration == nil {
		out.Notes = append(out.Notes, "no prediction: the coupon's group has no active penetration calibration")
		return nil
	}
	cp := d.Coupon
	iv, err := cal.Fit.Penetration.Predict(cp.CurrentA, cp.VoltageV, cp.TravelSpeedMMPerS, out.Level)
	if err != nil {
		return err
	}
	po.Source, po.Model, po.CalibrationID = sourceCalibration, string(cal.Model), &cal.ID
	po.PredictedMM, po.Interval = &iv.MedianMM, &iv
	if m := po.MeasuredMeanMM; m != nil {
		po.ResidualMM = ptrTo(*m - iv.MedianMM)
		po.InsidePredictionInterval = ptrTo(*m >= iv.PredLowMM && *m <= iv.PredHighMM)
		if *m > 0 {
			po.ResidualLn = ptrTo(math.Log(*m) - math.Log(iv.MedianMM))
		} else {
			out.Notes = append(out.Notes, "no ln residual: the measured penetration is 0 mm")
		}
	}
	return nil
}
